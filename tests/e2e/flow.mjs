// Helpers of the demo, effect and review browser tests: steps of the rail,
// waiting for the engine, ink on a canvas, downloads, opening the demo.

import { readFile } from 'node:fs/promises';
import { pathToFileURL } from 'node:url';
import { SINGLE_FILE, openApp } from './support.mjs';

export const APP_URL = pathToFileURL(SINGLE_FILE).href;

/** Click a step of the rail and wait for its screen. */
export async function step(page, id) {
  await page.locator(`button.rail-button[data-step="${id}"]`).click();
  await page.locator(`[data-testid="screen"][data-step="${id}"]`).waitFor();
}

/** Wait until no engine work is running. */
export async function idle(page) {
  await page.waitForFunction(() => document.querySelector('[data-testid="progress"]').hidden, null, { timeout: 120_000 });
}

/** How many pixels of a canvas (the `nth` with this test id) are inked. */
export function ink(page, testId, nth = 0) {
  return page.evaluate(
    ([id, k]) => {
      const canvas = document.querySelectorAll(`[data-testid="${id}"]`)[k];
      if (!canvas || !canvas.width) return 0;
      const data = canvas.getContext('2d').getImageData(0, 0, canvas.width, canvas.height).data;
      let n = 0;
      for (let i = 0; i < data.length; i += 4) {
        if (data[i + 3] > 0 && (data[i] < 200 || data[i + 1] < 200 || data[i + 2] < 200)) n += 1;
      }
      return n;
    },
    [testId, nth],
  );
}

/** Click `testId` (or a locator) and return the downloaded file's name and bytes. */
export async function downloaded(page, target) {
  const locator = typeof target === 'string' ? page.getByTestId(target) : target;
  const [download] = await Promise.all([page.waitForEvent('download'), locator.click()]);
  return { name: download.suggestedFilename(), bytes: await readFile(await download.path()), download };
}

/** Open the demo and wait until its designs have run. */
export async function openDemo(t) {
  const opened = await openApp(t, `${APP_URL}#demo`);
  const { page } = opened;
  await page.evaluate(() => {
    window.__longTasks = [];
    new PerformanceObserver((list) => {
      for (const e of list.getEntries()) window.__longTasks.push(e.duration);
    }).observe({ type: 'longtask', buffered: true });
  });
  await page.locator('[data-testid="notice"]:not([hidden])', { hasText: /^Demo:/ }).waitFor({ timeout: 180_000 });
  await page.locator('[data-testid="screen"][data-step="balance"]').waitFor();
  await idle(page);
  return opened;
}


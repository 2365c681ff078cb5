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


/**
 * Record every dialog and every call a script payload would make: the
 * page's `dialog` event, and (before any script of the page runs) stand-ins
 * for alert, confirm, prompt, print and open, plus a `__pwned` global
 * whose setter records a write. `calls()` returns what was recorded.
 */
export async function trapPayloads(page) {
  const dialogs = [];
  page.on('dialog', async (d) => {
    dialogs.push(`${d.type()}: ${d.message()}`);
    await d.dismiss().catch(() => {});
  });
  await page.addInitScript(() => {
    const calls = [];
    Object.defineProperty(window, '__payloadCalls', { value: calls });
    for (const name of ['alert', 'confirm', 'prompt', 'print', 'open']) {
      Object.defineProperty(window, name, {
        value: (...args) => {
          calls.push(`${name}(${args.map(String).join(', ')})`);
          return null;
        },
      });
    }
    Object.defineProperty(window, '__pwned', {
      get: () => undefined,
      set: (v) => calls.push(`__pwned = ${String(v)}`),
    });
  });
  return {
    dialogs,
    calls: (p = page) => p.evaluate(() => [...(window.__payloadCalls ?? ['the trap is missing'])]),
  };
}

/**
 * Elements and attributes only a payload could have put in the page: none
 * of them belongs to the app (charts are canvases, text is text).
 */
export function strayMarkup(page) {
  return page.evaluate(() => {
    const q = (s) => document.querySelectorAll(s).length;
    const eventAttributes = [...document.querySelectorAll('*')].flatMap((e) =>
      [...e.attributes].filter((a) => a.name.startsWith('on')).map((a) => `${e.tagName.toLowerCase()}[${a.name}]`),
    );
    return {
      img: q('img'),
      svg: q('svg'),
      iframe: q('iframe, frame, object, embed'),
      base: q('base'),
      refresh: q('meta[http-equiv="refresh" i]'),
      httpEquiv: q('meta[http-equiv]'),
      // The app's own link is its empty icon (so the browser asks for none).
      link: q('link:not([rel="icon"][href="data:,"])'),
      scripts: document.scripts.length,
      styles: q('style'),
      form: q('form, input[type="submit"]'),
      math: q('math'),
      bold: q('b'),
      italic: q('i'),
      scriptLinks: q('a[href^="javascript:" i], [href^="javascript:" i], [src^="javascript:" i]'),
      bodies: q('body'),
      eventAttributes,
    };
  });
}

/**
 * What `strayMarkup` must find in the single-file app: its own policy meta,
 * its three script blocks (code, worker text, wasm), one style, one body.
 */
export const NO_STRAY_MARKUP = {
  img: 0, svg: 0, iframe: 0, base: 0, refresh: 0, httpEquiv: 1, link: 0, scripts: 3, styles: 1, form: 0, math: 0, bold: 0, italic: 0,
  scriptLinks: 0, bodies: 1, eventAttributes: [],
};

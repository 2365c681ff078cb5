// A review round made in the browser, end to end: on the demo, the analyst
// draws a round and saves two packets and the key; two simulated reviewers
// open their packets from disk, rate with keys (one closes and reopens the
// packet mid-way and finds the ratings kept) and export ratings files; the
// analyst adds them on the Review step and reads the merge, the agreement
// and the design comparison. Then a bad file gets a clear message.

import { test } from 'node:test';
import assert from 'node:assert/strict';
import { readFile, writeFile } from 'node:fs/promises';
import path from 'node:path';
import { pathToFileURL } from 'node:url';
import { assertQuiet, screenshot } from './support.mjs';
import { scratch } from './cli.mjs';
import { downloaded, idle, openDemo, step } from './flow.mjs';

/** Rate every pair of the packet at `file`; close and reopen after `stopAt` pairs. */
async function rate(context, file, ratingOf, stopAt = null) {
  const url = pathToFileURL(file).href;
  const requests = [];
  let page = await context.newPage();
  page.on('request', (r) => requests.push(r.url()));
  await page.goto(url);
  await page.locator('#app:not([hidden])').waitFor();
  const n = Number(await page.locator('#progress').getAttribute('max'));
  for (let i = 0; i < n; i += 1) {
    if (i === stopAt) {
      page.on('dialog', (d) => d.accept());
      await page.close({ runBeforeUnload: true });
      if (!page.isClosed()) await page.waitForEvent('close');
      page = await context.newPage();
      page.on('request', (r) => requests.push(r.url()));
      await page.goto(url);
      await page.locator('#app:not([hidden])').waitFor();
      assert.equal(await page.locator('#progress-text').textContent(), `${stopAt} of ${n} rated`, 'ratings restored on reopening');
      assert.equal(await page.locator('#position').textContent(), `Pair ${stopAt + 1} of ${n}`);
    }
    await page.keyboard.press(String(ratingOf(i)));
    await page.keyboard.press('ArrowRight');
  }
  assert.equal(await page.locator('#progress-text').textContent(), `${n} of ${n} rated`);
  const csvPath = path.join(path.dirname(file), `ratings-${path.basename(file, '.html')}.csv`);
  const [download] = await Promise.all([page.waitForEvent('download'), page.locator('#export').click()]);
  await download.saveAs(csvPath);
  assert.deepEqual([...new Set(requests)], [url], 'the packet requested nothing but itself');
  await page.close();
  return { n, csvPath };
}

test('a round drawn in the browser is rated in two packets and merged on the Review step', async (t) => {
  const { context, page, log } = await openDemo(t);
  const dir = await scratch(t);

  await step(page, 'review');
  await page.getByTestId('round-sets').fill('6');
  await page.getByTestId('round-seed').fill('17');
  await page.getByTestId('round-reviewers').fill('rev-a, rev-b');
  await page.getByTestId('round-draw').click();
  await idle(page);
  await page.getByTestId('round-summary').waitFor();
  assert.match(await page.getByTestId('round-summary').textContent(), /^Round R-[0-9A-Z]{10}: \d+ pairs \(6 from structured, 6 from notes-aware/);
  assert.match(await page.getByTestId('key-caution').textContent(), /The key stays with you/);

  const saved = {};
  for (const who of ['rev-a', 'rev-b']) {
    const got = await downloaded(page, page.locator(`[data-testid="download-packet"][data-reviewer="${who}"]`));
    assert.equal(got.name, `packet-${who}.html`);
    const html = got.bytes.toString('utf8');
    assert.doesNotMatch(html, /notes-aware|notes-mahalanobis|early_plan|readmit_30d|length_of_stay/, 'the packet names no design, group or outcome');
    saved[who] = path.join(dir, got.name);
    await got.download.saveAs(saved[who]);
  }
  const key = await downloaded(page, 'download-key');
  assert.equal(key.name, 'round-key.json');
  const keyJson = JSON.parse(key.bytes.toString('utf8'));
  await screenshot(page, 'review-round');

  const a = await rate(context, saved['rev-a'], (i) => (i % 5) + 1, 3);
  const b = await rate(context, saved['rev-b'], (i) => ((i + (i % 3 === 0 ? 1 : 0)) % 5) + 1);
  assert.equal(a.n, keyJson.round.items.length);
  assert.equal(b.n, a.n);

  // Back to the analyst: add both files (the key of this visit is still in memory).
  await page.bringToFront();
  await page.getByTestId('import-ratings').setInputFiles([a.csvPath, b.csvPath]);
  await page.locator('[data-testid="agreement-table"], [data-testid="error-banner"]:not([hidden])').first().waitFor();
  assert.equal(await page.getByTestId('error-banner').isHidden(), true, await page.getByTestId('error-banner').textContent());
  assert.match(await page.getByTestId('merge-summary').textContent(), new RegExp(`^${2 * a.n} ratings accepted from 2 files`));
  assert.ok(await page.getByTestId('merge-clean').isVisible(), 'no merge problems');
  const agreement = await page.getByTestId('agreement-table').textContent();
  for (const label of ['weighted kappa (linear), rev-a and rev-b', 'weighted kappa (quadratic), rev-a and rev-b', 'Krippendorff’s alpha, ordinal', 'Krippendorff’s alpha, interval', 'intraclass correlation']) {
    assert.ok(agreement.includes(label), label);
  }
  const rows = await page.getByTestId('comparison-table').locator('tbody tr').allTextContents();
  assert.ok(rows.some((r) => r.startsWith('structured')) && rows.some((r) => r.startsWith('notes-aware')), rows.join('\n'));
  await screenshot(page, 'review-results');

  // The same file again and a file of rows that do not belong: clear messages.
  const text = await readFile(a.csvPath, 'utf8');
  const lines = text.trimEnd().split('\r\n');
  const foreign = [lines[0], lines[1].replace(/^R-[0-9A-Z]{10},[0-9A-Z]{3}-[0-9A-Z]{3}/, `${keyJson.round.round_id},ZZZ-ZZZ`)].join('\r\n') + '\r\n';
  const foreignPath = path.join(dir, 'ratings-stray.csv');
  await writeFile(foreignPath, foreign);
  await page.getByTestId('import-ratings').setInputFiles([foreignPath]);
  await page.getByTestId('merge-issues').waitFor();
  const issues = await page.getByTestId('merge-issues').locator('li').allTextContents();
  assert.ok(issues.some((i) => i.includes('ratings-stray.csv') && /row 2/.test(i)), issues.join('\n'));
  await screenshot(page, 'review-issues');

  // The report now carries the expert review.
  await step(page, 'export');
  const report = await downloaded(page, 'export-report');
  assert.match(report.bytes.toString('utf8'), /id="review"/);
  assertQuiet(log);
});

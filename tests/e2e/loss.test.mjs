// Nothing lost. A rating packet keeps every confirmed rating through a
// reload, a closed tab, a crashed page, a second tab of the same file and a
// browser restart, and its ratings file holds exactly the confirmed ratings.
// The app's Review step keeps its round, key and imported ratings through a
// crashed engine worker and asks before closing while the key or the merged
// results are unsaved. A file whose content could not be made is not saved
// at all. Packets come from `pairsight packet` on the small invented test
// cohort (tests/fixtures/small.csv); the app runs the invented demo.

import { test } from 'node:test';
import assert from 'node:assert/strict';
import { mkdtemp, readFile, rm } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { pathToFileURL } from 'node:url';
import { chromium } from 'playwright-core';
import { CHROMIUM_FLAGS, assertQuiet, fixture, openBrowser, screenshot } from './support.mjs';
import { pairsight, scratch } from './cli.mjs';
import { downloaded, idle, openDemo, step } from './flow.mjs';

const CHROMIUM = process.env.PAIRSIGHT_CHROMIUM ?? '/usr/bin/chromium';
const trace = (...a) => (process.env.LOSS_TRACE ? console.error('[loss]', ...a) : undefined);

/** A persistent browser on profile folder `profile` (kept between launches). */
function launch(profile) {
  return chromium.launchPersistentContext(profile, {
    executablePath: CHROMIUM,
    headless: true,
    args: CHROMIUM_FLAGS,
    viewport: { width: 1280, height: 860 },
  });
}

/** Record every dialog of `page`, answering with `answer` ('accept' or 'dismiss'). */
function dialogsOf(page, answer = 'accept') {
  const seen = [];
  page.removeAllListeners('dialog');
  page.on('dialog', async (d) => {
    seen.push(d.type());
    await (answer === 'accept' ? d.accept() : d.dismiss());
  });
  return seen;
}

/** Close `page` as a person closes a tab (beforeunload runs). */
async function closeTab(page) {
  await page.close({ runBeforeUnload: true });
  if (!page.isClosed()) await page.waitForEvent('close', { timeout: 5_000 }).catch(() => {});
}

/** Open the packet at `url` in a new tab of `context`; resolves when it shows. */
async function openPacket(context, url, errors) {
  const page = await context.newPage();
  page.on('pageerror', (e) => errors.push(String(e)));
  page.on('console', (m) => {
    if (m.type() === 'error') errors.push(m.text());
  });
  await page.goto(url);
  await page.locator('#app:not([hidden])').waitFor();
  return page;
}

/** What the packet shows: rated count, position, the pressed point. */
async function seen(page) {
  return {
    progress: await page.locator('#progress-text').textContent(),
    pressed: await page.locator('.point[aria-pressed="true"]').getAttribute('data-value', { timeout: 200 }).catch(() => null),
  };
}

/** Go to pair `i` (0-based) with the arrow keys. */
async function goTo(page, i) {
  for (;;) {
    const at = Number((await page.locator('#position').textContent()).match(/^Pair (\d+)/)[1]) - 1;
    if (at === i) return;
    await page.keyboard.press(at < i ? 'ArrowRight' : 'ArrowLeft');
  }
}

/** The ratings each pair shows as pressed, for pairs 0..n-1: {key: value|null}. */
async function shownRatings(page, n) {
  const out = {};
  for (let i = 0; i < n; i += 1) {
    await goTo(page, i);
    out[await page.locator('#pair-key').textContent()] = (await seen(page)).pressed;
  }
  return out;
}

/** Export the ratings; returns the CSV text. */
async function exportCsv(page, dest) {
  const [download] = await Promise.all([page.waitForEvent('download'), page.locator('#export').click()]);
  await download.saveAs(dest);
  return readFile(dest, 'utf8');
}

test('a packet keeps every confirmed rating through reload, closed tab, crash, second tab and restart', async (t) => {
  const dir = await scratch(t);
  const r = pairsight(['packet', fixture('small.csv'), '--study', fixture('small.study.toml'), '--out', dir,
    '--reviewers', 'dee', '--sets-per-design', '4', '--seed', '5']);
  assert.equal(r.status, 0, r.stderr);
  const url = pathToFileURL(path.join(dir, 'packet-dee.html')).href;
  const profile = await mkdtemp(path.join(tmpdir(), 'pairsight-e2e-'));
  t.after(() => rm(profile, { recursive: true, force: true }));
  let context = await launch(profile);
  t.after(() => context.close());
  const errors = [];

  let page = await openPacket(context, url, errors);
  const n = Number(await page.locator('#progress').getAttribute('max'));
  assert.ok(n >= 6, `${n} pairs`);
  const confirmed = {}; // pair key -> rating, as the reviewer confirmed them
  const rateHere = async (p, i, v) => {
    await goTo(p, i);
    confirmed[await p.locator('#pair-key').textContent()] = String(v);
    await p.keyboard.press(String(v));
  };
  await rateHere(page, 0, 4);
  await rateHere(page, 1, 2);
  // Pair 2: a comment typed but no point chosen, i.e. not a rating.
  await goTo(page, 2);
  const halfKey = await page.locator('#pair-key').textContent();
  await page.locator('#comment').fill('started, not decided');
  await page.locator('#comment').blur();
  const expectRated = () => `${Object.keys(confirmed).length} of ${n} rated`;
  assert.equal((await seen(page)).progress, expectRated());

  trace('// (a) Reload');
  // (a) Reload mid-round: the page asks first, then everything is back.
  const reloadDialogs = dialogsOf(page);
  await page.reload();
  await page.locator('#app:not([hidden])').waitFor();
  assert.ok(reloadDialogs.every((d) => d === 'beforeunload'), reloadDialogs.join());
  assert.equal((await seen(page)).progress, expectRated(), 'after reload');
  await goTo(page, 2);
  assert.equal(await page.locator('#comment').inputValue(), 'started, not decided', 'the comment is kept');
  assert.equal((await seen(page)).pressed, null, 'but it is not a rating');

  trace('// (b) Close');
  // (b) Close the tab (a warning: ratings not exported), open the file again.
  const closeDialogs = dialogsOf(page);
  await closeTab(page);
  assert.deepEqual(closeDialogs, ['beforeunload'], 'closing with unexported ratings warns');
  page = await openPacket(context, url, errors);
  assert.equal((await seen(page)).progress, expectRated(), 'after closing the tab');
  assert.match(await page.locator('#status').textContent(), /^Welcome back: 2 of/);

  trace('// (c) Crash');
  // (c) Crash the page's renderer right after a key press: the rating
  // confirmed by that press was written before the press returned.
  await rateHere(page, 3, 5);
  const cdp = await context.newCDPSession(page);
  trace('crashing');
  await Promise.race([cdp.send('Page.crash').catch(() => {}), page.waitForEvent('crash')]); // the session dies with the page
  trace('crashed');
  await page.waitForEvent('crash', { timeout: 10_000 }).catch(() => {});
  await page.close().catch(() => {});
  page = await openPacket(context, url, errors);
  assert.equal((await seen(page)).progress, expectRated(), 'after a crash');

  trace('// (d) The same');
  // (d) The same file open in two tabs: each sees the other's ratings, and
  // neither overwrites them.
  const second = await openPacket(context, url, errors);
  await rateHere(second, 4, 1);
  await rateHere(page, 5, 3);
  assert.equal((await seen(second)).progress, expectRated(), 'the second tab sees the first tab’s rating');
  assert.equal((await seen(page)).progress, expectRated(), 'the first tab sees the second tab’s rating');
  dialogsOf(second);
  await closeTab(second);

  trace('// (e) Quit');
  // (e) Quit the browser and start it again on the same profile.
  await context.close();
  context = await launch(profile);
  page = await openPacket(context, url, errors);
  assert.equal((await seen(page)).progress, expectRated(), 'after a browser restart');
  const shown = await shownRatings(page, n);
  const expected = {};
  for (const k of Object.keys(shown)) expected[k] = confirmed[k] ?? null;
  assert.deepEqual(shown, expected, 'each pair shows the rating confirmed for it, and no other');

  trace('// Storage holds');
  // Storage holds ratings and settings, never the notes shown.
  const stored = await page.evaluate(() => Object.values(localStorage).join('\n'));
  const notes = await page.evaluate(() => JSON.parse(document.getElementById('packet-data').textContent).pairs.flatMap((p) => [p.left.note, p.right.note]));
  for (const note of notes.filter((x) => x.length > 12)) assert.ok(!stored.includes(note), 'no note text in storage');

  trace('// The export holds');
  // The export holds exactly the confirmed ratings; the comment-only pair is not in it.
  const csv = await exportCsv(page, path.join(dir, 'ratings-dee.csv'));
  const rows = csv.trimEnd().split('\r\n').slice(1).map((l) => l.split(','));
  const exported = Object.fromEntries(rows.map((c) => [c[1], c[3]]));
  assert.deepEqual(exported, confirmed);
  assert.ok(!(halfKey in exported));
  assert.ok(csv.endsWith('\r\n'), 'the file ends with its last line whole');
  await screenshot(page, 'loss-packet');

  trace('// Exported: closing');
  // Exported: closing does not ask. A change after the export: it asks again.
  const quiet = dialogsOf(page);
  await closeTab(page);
  assert.deepEqual(quiet, [], 'no warning after a complete export');
  page = await openPacket(context, url, errors);
  await rateHere(page, 6 % n, 2);
  const again = dialogsOf(page);
  await closeTab(page);
  assert.deepEqual(again, ['beforeunload'], 'a rating after the export: a warning again');
  // The ratings file merges: the command line reads it against the key.
  const merged = pairsight(['agree', '--key', path.join(dir, 'round-key.json'), path.join(dir, 'ratings-dee.csv')]);
  assert.equal(merged.status, 0, merged.stderr);
  assert.deepEqual(errors, [], 'no errors in the packet');
});

test('a packet whose ratings cannot be stored says so at each rating and asks before closing', async (t) => {
  const dir = await scratch(t);
  const r = pairsight(['packet', fixture('small.csv'), '--study', fixture('small.study.toml'), '--out', dir,
    '--reviewers', 'eli', '--sets-per-design', '2', '--seed', '3']);
  assert.equal(r.status, 0, r.stderr);
  const { page, log } = await openBrowser(t);
  // Storage that reads but refuses every write, as a full quota does.
  await page.addInitScript(() => {
    Storage.prototype.setItem = function () {
      throw new DOMException('The quota has been exceeded.', 'QuotaExceededError');
    };
  });
  await page.goto(pathToFileURL(path.join(dir, 'packet-eli.html')).href);
  await page.locator('#app:not([hidden])').waitFor();
  await page.keyboard.press('3');
  assert.match(await page.locator('#status').textContent(), /^Rated 3, but your ratings could not be kept in this browser\. Export them now/);
  await page.keyboard.press('ArrowRight');
  await page.keyboard.press('4');
  assert.match(await page.locator('#status').textContent(), /could not be kept/, 'said again at the next rating');
  await screenshot(page, 'loss-packet-no-storage');
  const dialogs = dialogsOf(page);
  await closeTab(page);
  assert.deepEqual(dialogs, ['beforeunload']);
  assertQuiet(log);
});

/** Rate every pair of the packet at `file` in a new tab; returns the ratings file's path. */
async function rateAll(context, file, ratingOf) {
  const page = await context.newPage();
  await page.goto(pathToFileURL(file).href);
  await page.locator('#app:not([hidden])').waitFor();
  const n = Number(await page.locator('#progress').getAttribute('max'));
  for (let i = 0; i < n; i += 1) {
    await page.keyboard.press(String(ratingOf(i)));
    await page.keyboard.press('ArrowRight');
  }
  const csvPath = path.join(path.dirname(file), path.basename(file).replace(/^packet-(.*)\.html$/, 'ratings-$1.csv'));
  const [download] = await Promise.all([page.waitForEvent('download'), page.locator('#export').click()]);
  await download.saveAs(csvPath);
  await page.close();
  return csvPath;
}

/** Try to close the app's tab, refuse at the question; returns the dialogs seen. */
async function tryToClose(page) {
  const seenDialogs = [];
  const onDialog = async (d) => {
    seenDialogs.push(d.type());
    await d.dismiss();
  };
  page.on('dialog', onDialog);
  await page.close({ runBeforeUnload: true });
  await new Promise((resolve) => setTimeout(resolve, 500));
  page.off('dialog', onDialog);
  assert.equal(page.isClosed(), seenDialogs.length === 0, 'the page stays only when the question was refused');
  return seenDialogs;
}

/** End the engine's worker from inside, as a crashed worker ends: without a word. */
async function killWorker(page) {
  const before = page.workers();
  assert.equal(before.length, 1, 'one engine worker');
  const gone = before[0].waitForEvent('close', { timeout: 10_000 });
  await before[0].evaluate(() => self.close()).catch(() => {});
  await gone;
  // The engine notices and starts a fresh worker.
  await page.waitForEvent('worker', { timeout: 20_000 });
}

test('the Review step survives a crashed engine worker and asks before losing an unsaved key or results', async (t) => {
  const { context, page, log } = await openDemo(t);
  const dir = await scratch(t);

  await step(page, 'review');
  await page.getByTestId('round-sets').fill('3');
  await page.getByTestId('round-reviewers').fill('rev-a, rev-b');
  await page.getByTestId('round-draw').click();
  await idle(page);
  await page.getByTestId('round-summary').waitFor();
  const unsaved = page.getByTestId('review-unsaved');
  assert.match(await unsaved.textContent(), /^Not saved yet: the key of round R-/);

  // The key is unsaved: closing asks, and refusing keeps the page.
  assert.deepEqual(await tryToClose(page), ['beforeunload']);

  const files = {};
  for (const who of ['rev-a', 'rev-b']) {
    const got = await downloaded(page, page.locator(`[data-testid="download-packet"][data-reviewer="${who}"]`));
    files[who] = path.join(dir, got.name);
    await got.download.saveAs(files[who]);
  }
  const key = await downloaded(page, 'download-key');
  const keyJson = JSON.parse(key.bytes.toString('utf8'));
  assert.equal(keyJson.round.round_id, (await page.getByTestId('round-summary').textContent()).match(/Round (R-[0-9A-Z]+)/)[1], 'the key file is whole');
  assert.equal(await unsaved.isHidden(), true, 'nothing unsaved once the key is saved');

  const a = await rateAll(context, files['rev-a'], (i) => (i % 5) + 1);
  const b = await rateAll(context, files['rev-b'], (i) => ((i + 1) % 5) + 1);
  await page.bringToFront();
  await page.getByTestId('import-ratings').setInputFiles([a, b]);
  await page.getByTestId('agreement-table').waitFor();
  const summary = await page.getByTestId('merge-summary').textContent();
  const agreement = await page.getByTestId('agreement-table').textContent();
  assert.match(await unsaved.textContent(), /the merged ratings’ results/);
  assert.deepEqual(await tryToClose(page), ['beforeunload'], 'unsaved results: closing asks');

  // The worker dies while idle; the next merge runs on a fresh one, from
  // what the page holds, with nothing imported again.
  await killWorker(page);
  await page.getByTestId('review-level').fill('3');
  await page.getByTestId('review-level').press('Tab');
  await page.locator('[data-testid="comparison-table"] th', { hasText: /Share ≥ 3/ }).waitFor({ timeout: 30_000 });
  assert.equal(await page.getByTestId('error-banner').isHidden(), true, await page.getByTestId('error-banner').textContent());
  assert.equal(await page.getByTestId('merge-summary').textContent(), summary, 'the same ratings, merged again');
  assert.equal(await page.getByTestId('agreement-table').textContent(), agreement, 'the same agreement');
  assert.deepEqual(await page.locator('[data-testid="rating-files"] li').evaluateAll((l) => l.map((x) => x.dataset.file)), ['ratings-rev-a.csv', 'ratings-rev-b.csv']);
  await screenshot(page, 'loss-review-after-crash');

  // The worker dies in the middle of a merge: it computes, then ends
  // instead of answering. The page notices, and the merge is asked again of
  // a fresh worker.
  const [worker] = page.workers();
  await worker.evaluate(() => {
    const send = self.postMessage.bind(self);
    self.postMessage = (msg, transfer) => (msg?.type === 'result' ? self.close() : send(msg, transfer));
  });
  const replaced = page.waitForEvent('worker', { timeout: 20_000 });
  await page.getByTestId('review-level').fill('4');
  await page.getByTestId('review-level').press('Tab');
  await replaced;
  await page.locator('[data-testid="comparison-table"] th', { hasText: /Share ≥ 4/ }).waitFor({ timeout: 30_000 });
  assert.equal(await page.getByTestId('error-banner').isHidden(), true, await page.getByTestId('error-banner').textContent());
  assert.equal(await page.getByTestId('merge-summary').textContent(), summary, 'the same ratings, merged on the fresh worker');

  // Saving the results file: whole JSON with the merge as shown.
  const results = await downloaded(page, 'save-review');
  assert.equal(results.name, `review-${keyJson.round.round_id}.json`);
  const parsed = JSON.parse(results.bytes.toString('utf8'));
  assert.equal(parsed.round_id, keyJson.round.round_id);
  assert.equal(summary.startsWith(`${parsed.accepted} ratings accepted`), true, summary);
  assert.deepEqual(parsed.files, ['ratings-rev-a.csv', 'ratings-rev-b.csv']);
  assert.ok(parsed.results.agreement.kappas.length >= 1);
  assert.equal(await unsaved.isHidden(), true);

  // The app keeps no key, no pair and no note: its storage is settings only.
  // (Pages opened from disk share one storage, so the packets rated in this
  // browser are there too, under their own names; they are left out here.)
  const stored = await page.evaluate(() =>
    Object.entries(localStorage)
      .filter(([k]) => !k.startsWith('pairsight-packet:'))
      .map(([k, v]) => `${k}=${v}`)
      .join('\n'));
  assert.match(stored, /pairsight:study:/, 'the study settings are kept');
  assert.ok(!stored.includes(keyJson.round.round_id), 'no round key in storage');
  for (const item of keyJson.round.items.slice(0, 5)) assert.ok(!stored.includes(item.pair_key), 'no pair in storage');

  // A worker that died while idle also took the cohort with it: the next
  // call that needs it opens it again, unasked.
  await killWorker(page);
  await step(page, 'export');
  const report = await downloaded(page, 'export-report');
  assert.match(report.bytes.toString('utf8'), /id="review"/);
  assert.ok(report.bytes.toString('utf8').trimEnd().endsWith('</html>'), 'the report is whole');

  // A file whose content could not be made is not saved at all: a PNG the
  // canvas could not encode (toBlob hands over null).
  await page.evaluate(() => {
    window.__toBlob = HTMLCanvasElement.prototype.toBlob;
    HTMLCanvasElement.prototype.toBlob = function (callback) {
      setTimeout(() => callback(null), 0);
    };
  });
  const downloads = [];
  page.on('download', (d) => downloads.push(d.suggestedFilename()));
  await page.getByTestId('export-love-png').click();
  await page.locator('[data-testid="error-banner"]:not([hidden])').waitFor({ timeout: 30_000 });
  await idle(page);
  await page.waitForTimeout(1_000);
  assert.deepEqual(downloads, [], 'no file when its content could not be made');
  assert.match(await page.getByTestId('error-banner').textContent(), /love-plot\.png was not saved/);
  await page.evaluate(() => {
    HTMLCanvasElement.prototype.toBlob = window.__toBlob;
  });
  const png = await downloaded(page, 'export-love-png');
  assert.deepEqual([...png.bytes.subarray(0, 8)], [0x89, 0x50, 0x4e, 0x47, 0x0d, 0x0a, 0x1a, 0x0a], 'a PNG signature');
  assert.equal(png.bytes.subarray(-8, -4).toString('latin1'), 'IEND', 'the PNG ends with its last chunk');

  // Everything saved: closing does not ask.
  assert.deepEqual(await tryToClose(page), []);
  assertQuiet(log);
});

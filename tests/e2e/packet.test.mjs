// Rating packets as reviewers use them: opened from disk in headless
// Chromium, rated with keys and mouse, closed and reopened mid-way without
// losing ratings, exported as ratings files that `pairsight agree` merges.
// The cohort is the small invented test cohort (tests/fixtures/small.csv).

import { test } from 'node:test';
import assert from 'node:assert/strict';
import { readFile } from 'node:fs/promises';
import path from 'node:path';
import { pathToFileURL } from 'node:url';
import { assertQuiet, fixture, openBrowser, screenshot } from './support.mjs';
import { hostileCohort, pairsight, scratch } from './cli.mjs';

/** Draw a round for reviewers `names` from `data` and `study` into `dir`. */
function drawRound(dir, names, data = fixture('small.csv'), study = fixture('small.study.toml'), extra = []) {
  const r = pairsight(['packet', data, '--study', study, '--out', dir, '--reviewers', names.join(','),
    '--sets-per-design', '4', '--seed', '11', ...extra]);
  assert.equal(r.status, 0, r.stderr);
}

const progress = (page) => page.locator('#progress-text').textContent();

/** Rate the current pair by pressing a digit, then move on with the arrow key. */
async function rateByKey(page, value) {
  await page.keyboard.press(String(value));
  await page.keyboard.press('ArrowRight');
}

/** Rate the current pair by clicking its point on the scale, then Next (not after the last). */
async function rateByMouse(page, value, last) {
  await page.locator(`.point[data-value="${value}"]`).click();
  if (last) {
    assert.equal(await page.locator('#next').isDisabled(), true);
  } else {
    await page.locator('#next').click();
  }
}

/** Close the page the way a reviewer closes a tab; returns the dialog types seen. */
async function closeLikeAPerson(page) {
  const dialogs = [];
  page.on('dialog', async (d) => {
    dialogs.push(d.type());
    await d.accept();
  });
  await page.close({ runBeforeUnload: true });
  // The page is gone once its close event fires.
  if (!page.isClosed()) await page.waitForEvent('close');
  return dialogs;
}

/** Export the ratings and save the downloaded file to `dest`. */
async function exportTo(page, dest) {
  const [download] = await Promise.all([page.waitForEvent('download'), page.locator('#export').click()]);
  assert.match(download.suggestedFilename(), /^ratings-[a-z0-9._-]+-R-[0-9A-Z]{10}\.csv$/);
  await download.saveAs(dest);
  return readFile(dest, 'utf8');
}

/** One reviewer rates the whole packet in two sittings and exports. */
async function review(t, dir, name, ratingOf) {
  const url = pathToFileURL(path.join(dir, `packet-${name}.html`)).href;
  const { context, page, log } = await openBrowser(t);
  await page.goto(url);
  await page.locator('#app:not([hidden])').waitFor();
  const n = Number(await page.locator('#progress').getAttribute('max'));
  assert.ok(n >= 4, `${n} pairs`);
  assert.equal(await progress(page), `0 of ${n} rated`);
  assert.equal(await page.locator('#position').textContent(), `Pair 1 of ${n}`);
  // Nothing rated: no file of only the header is exported.
  let downloads = 0;
  page.on('download', () => (downloads += 1));
  await page.locator('#export').click();
  assert.match(await page.locator('#status').textContent(), /No pair is rated yet/);
  assert.equal(downloads, 0);

  // First sitting: half the pairs by keyboard, then close the tab.
  const half = Math.floor(n / 2);
  for (let i = 0; i < half; i += 1) await rateByKey(page, ratingOf(i));
  assert.equal(await progress(page), `${half} of ${n} rated`);
  const dialogs = await closeLikeAPerson(page);
  assert.deepEqual(dialogs, ['beforeunload'], 'a warning before closing with ratings not exported');

  // Second sitting: the same file in the same browser remembers everything.
  const again = await context.newPage();
  again.on('pageerror', (e) => log.pageErrors.push(String(e)));
  await again.goto(url);
  await again.locator('#app:not([hidden])').waitFor();
  assert.equal(await progress(again), `${half} of ${n} rated`);
  assert.match(await again.locator('#status').textContent(), new RegExp(`Welcome back: ${half} of ${n}`));
  assert.equal(await again.locator('#position').textContent(), `Pair ${half + 1} of ${n}`);
  // Earlier ratings are shown when going back (p moves to the previous pair).
  await again.keyboard.press('p');
  assert.equal(await again.locator('.point[aria-pressed="true"]').getAttribute('data-value'), String(ratingOf(half - 1)));
  await again.keyboard.press('n');
  for (let i = half; i < n; i += 1) {
    if (i === half) await again.locator('#comment').fill(`${name}: both frail, one lives alone`);
    await rateByMouse(again, ratingOf(i), i === n - 1);
  }
  assert.equal(await progress(again), `${n} of ${n} rated`);
  await screenshot(again, `packet-${name}`);
  const csv = await exportTo(again, path.join(dir, `ratings-${name}.csv`));
  const lines = csv.trimEnd().split('\r\n');
  assert.equal(lines[0], 'round_id,pair_key,reviewer,rating,comment,time');
  assert.equal(lines.length, n + 1);
  assert.ok(csv.includes(`"${name}: both frail, one lives alone"`), 'the comment is exported, quoted');
  for (const line of lines.slice(1)) {
    assert.match(line, new RegExp(`^R-[0-9A-Z]{10},[0-9A-Z]{3}-[0-9A-Z]{3},${name},[1-5],.*,\\d{4}-\\d\\d-\\d\\dT\\d\\d:\\d\\d:\\d\\d\\.\\d{3}Z$`));
  }
  // Exported: closing no longer warns.
  assert.deepEqual(await closeLikeAPerson(again), []);
  // Nothing but the packet file itself was requested.
  assert.deepEqual([...new Set(log.requests)], [url]);
  assertQuiet(log);
  return n;
}

test('two reviewers rate their packets across two sittings and the analyst merges the ratings', async (t) => {
  const dir = await scratch(t);
  drawRound(dir, ['rev-a', 'rev-b']);
  const nA = await review(t, dir, 'rev-a', (i) => (i % 5) + 1);
  const nB = await review(t, dir, 'rev-b', (i) => ((i + 1) % 5) + 1);
  assert.equal(nA, nB);
  const r = pairsight(['agree', '--key', path.join(dir, 'round-key.json'),
    path.join(dir, 'ratings-rev-a.csv'), path.join(dir, 'ratings-rev-b.csv')]);
  assert.equal(r.status, 0, r.stderr);
  assert.match(r.stdout, /kappa, quadratic weights: rev-a and rev-b/);
  assert.match(r.stdout, /Rated similarity per design/);
  const results = JSON.parse(await readFile(path.join(dir, 'agreement.json'), 'utf8'));
  assert.equal(results.ratings, 2 * nA);
  assert.equal(results.agreement.pairs_complete, nA);
  assert.deepEqual(results.agreement.reviewers, ['rev-a', 'rev-b']);
  // Ratings exported from a browser carry comments back intact.
  const back = await readFile(path.join(dir, 'ratings-rev-a.csv'), 'utf8');
  assert.ok(back.includes('rev-a: both frail, one lives alone'));
});

test('markup in notes, labels and column names shows literally and never runs', async (t) => {
  const dir = await scratch(t);
  const { data, study, col } = await hostileCohort(dir);
  drawRound(dir, ['cy'], data, study, ['--show', `${col},ward`]);
  const { page, log } = await openBrowser(t);
  const dialogs = [];
  page.on('dialog', async (d) => {
    dialogs.push(d.message());
    await d.dismiss();
  });
  const url = pathToFileURL(path.join(dir, 'packet-cy.html')).href;
  await page.goto(url);
  await page.locator('#app:not([hidden])').waitFor();
  const n = Number(await page.locator('#progress').getAttribute('max'));
  const seen = [];
  for (let i = 0; i < n; i += 1) {
    seen.push(await page.locator('#note-left').textContent(), await page.locator('#note-right').textContent());
    seen.push(await page.locator('#fields-left').textContent());
    await page.keyboard.press('ArrowRight');
  }
  const all = seen.join('\n');
  assert.ok(all.includes('</script><script>alert(1)</script>') || all.includes('"><img src=x onerror=alert(2)>')
    || all.includes('<svg onload=alert(3)>') || all.includes('</textarea><b>bold?</b>'), 'a payload shows as text');
  assert.ok(all.includes(col), 'the column name shows as text');
  assert.ok(all.includes('<i>east</i>') || all.includes('west'));
  const dom = await page.evaluate(() => ({
    imgs: document.querySelectorAll('img').length,
    svgs: document.querySelectorAll('svg').length,
    bold: document.querySelectorAll('b').length,
    italic: document.querySelectorAll('i').length,
    scripts: document.scripts.length,
  }));
  assert.deepEqual(dom, { imgs: 0, svgs: 0, bold: 0, italic: 0, scripts: 2 });
  await screenshot(page, 'packet-hostile');
  assert.deepEqual(dialogs, [], 'no dialog opened');
  assert.deepEqual([...new Set(log.requests)], [url]);
  assertQuiet(log);
});

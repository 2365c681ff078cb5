// The demo as a first-time user meets it, and the browser/command-line
// determinism check: `#demo` in the single file opened from disk opens the
// invented demo cohort and runs its designs; the balance table, the plots,
// the pair view and the Effect step show what they promise; the matched
// data and balance table of every design equal what `pairsight match`
// writes from the same cohort and study file, byte for byte (also for two
// test fixtures); no request leaves the page and the main thread never
// blocks for 200 ms.

import { test } from 'node:test';
import assert from 'node:assert/strict';
import { readFile } from 'node:fs/promises';
import path from 'node:path';
import { pathToFileURL } from 'node:url';
import { ROOT, assertQuiet, fixture, openApp, pickFile, screenshot } from './support.mjs';
import { pairsight, scratch } from './cli.mjs';
import { APP_URL, downloaded, idle, ink, openDemo, step } from './flow.mjs';

/** Every design's matched.csv and balance.csv as the page exports them. */
async function browserFiles(page, designs) {
  await step(page, 'export');
  const out = {};
  for (const name of designs) {
    await page.getByTestId('export-design').selectOption(name);
    for (const file of ['matched.csv', 'balance.csv']) {
      const got = await downloaded(page, file === 'matched.csv' ? 'export-matched' : 'export-balance');
      assert.equal(got.name, `${name}-${file}`);
      out[`${name}/${file}`] = got.bytes;
    }
  }
  return out;
}

/** The same files written by `pairsight match`. */
async function cliFiles(t, data, study, designs) {
  const dir = await scratch(t);
  const r = pairsight(['match', data, '--study', study, '--out', dir]);
  assert.equal(r.status, 0, r.stderr);
  const out = {};
  for (const name of designs) {
    for (const file of ['matched.csv', 'balance.csv']) out[`${name}/${file}`] = await readFile(path.join(dir, name, file));
  }
  return out;
}

function assertSameBytes(browser, cli, label) {
  assert.deepEqual(Object.keys(browser).sort(), Object.keys(cli).sort());
  for (const k of Object.keys(cli)) {
    assert.ok(browser[k].length > 0, `${label} ${k} is not empty`);
    assert.ok(browser[k].equals(cli[k]), `${label} ${k}: the page's bytes equal the command line's`);
  }
}

function assertNoTraffic(log, alsoOpened = []) {
  const elsewhere = log.requests.filter((url) => !url.startsWith('blob:') && url.split('#')[0] !== APP_URL && !alsoOpened.includes(url));
  assert.deepEqual(elsewhere, [], 'requests besides the file itself');
}

test('#demo opens the demo cohort, runs its designs, and every screen shows what it promises', async (t) => {
  const { page, log } = await openDemo(t);
  const designs = await page.locator('[data-testid="compare-picker"] input, .compare-picker input').evaluateAll((xs) => xs.map((x) => x.dataset.design));
  assert.deepEqual(designs.slice(0, 2), ['structured', 'notes-aware']);

  // Balance: structured rows and concept rows (marked as from the notes); plots have ink.
  await page.waitForFunction(() => document.querySelector('[data-testid="overlap-plot"]').dataset.drawn === 'true', null, { timeout: 60_000 });
  const table = page.getByTestId('balance-table');
  assert.equal(await table.locator('tr[data-note="false"][data-term="age"]').count(), 1, 'a structured row');
  const concept = table.locator('tr[data-note="true"][data-kind="concept"][data-term="concept.lives_alone"]');
  assert.equal(await concept.count(), 1, 'a concept row');
  assert.match(await concept.locator('.tag-note').textContent(), /note/);
  assert.ok((await ink(page, 'love-plot')) > 2000, 'the Love plot has ink');
  assert.ok((await ink(page, 'overlap-plot')) > 2000, 'the overlap plot has ink');
  await screenshot(page, 'demo-balance');

  // Side by side: both kinds of mention appear within the first sets.
  await step(page, 'pairs');
  const view = page.getByTestId('pair-view');
  await view.getByTestId('pair-note').first().waitFor();
  let seen = { affirmed: false, negated: false };
  for (let i = 0; i < 80; i += 1) {
    seen = {
      affirmed: seen.affirmed || (await view.locator('mark.mention.is-affirmed').count()) > 0,
      negated: seen.negated || (await view.locator('mark.mention.is-negated').count()) > 0,
    };
    if (seen.affirmed && seen.negated) break;
    const before = await page.getByTestId('pair-position').textContent();
    await page.keyboard.press('j');
    await page.waitForFunction((b) => document.querySelector('[data-testid="pair-position"]').textContent !== b, before);
    await idle(page);
  }
  assert.deepEqual(seen, { affirmed: true, negated: true }, 'affirmed and negated mentions highlighted');
  await screenshot(page, 'demo-pairs');

  // Effect: estimates with intervals, tests, cautions, and the sensitivity plot.
  await step(page, 'effect');
  await page.getByTestId('effect-design').selectOption('notes-aware');
  const outcomes = page.getByTestId('outcome');
  assert.deepEqual(await outcomes.evaluateAll((xs) => xs.map((x) => x.dataset.outcome)), ['readmit_30d', 'length_of_stay']);
  const readmit = outcomes.first();
  const matched = await readmit.getByTestId('estimate-matched').locator('td').allTextContents();
  assert.match(matched[0], /^-?\d+\.\d{3}$/, 'an estimate');
  assert.match(matched[1], /^-?\d+\.\d{3} to -?\d+\.\d{3}$/, 'an interval');
  assert.match(matched[3], /McNemar/i, 'McNemar’s test for a binary outcome in pairs');
  assert.match(await outcomes.nth(1).getByTestId('estimate-matched').textContent(), /Wilcoxon/i);
  assert.ok(await readmit.getByTestId('estimate-unmatched').isVisible(), 'the unmatched estimate beside it');
  const caution = await page.getByTestId('effect-caution').first().textContent();
  assert.match(caution, /no unmeasured confounding/);
  assert.match(caution, /bounds that doubt.*does not remove it/);
  assert.match(caution, /qualified people.*research-ethics and data-governance/);
  assert.equal(await page.getByTestId('outcome-caution').count(), 2, 'a caution beside each outcome');
  assert.ok((await readmit.getByTestId('sensitivity-table').locator('tbody tr').count()) > 3, 'bounds at several Gamma');
  assert.match(await readmit.getByTestId('gamma-critical').textContent(), /Gamma/);
  assert.match(await readmit.getByTestId('e-value').textContent(), /E-value/);
  await page.waitForFunction(() => document.querySelector('[data-testid="sensitivity-plot"]')?.dataset.drawn === 'true', null, { timeout: 60_000 });
  assert.ok((await ink(page, 'sensitivity-plot')) > 1500, 'the sensitivity plot has ink');
  const svg = await downloaded(page, readmit.getByTestId('export-sensitivity-svg'));
  assert.match(svg.bytes.toString('utf8'), /^<svg[\s\S]*<\/svg>\s*$/);
  await screenshot(page, 'demo-effect');

  // The browser's files equal the command line's for every demo design.
  const names = await page.getByTestId('effect-design').locator('option').evaluateAll((os) => os.map((o) => o.value));
  assert.ok(names.length >= 3, `${names.length} demo designs`);
  const browser = await browserFiles(page, names);
  const cli = await cliFiles(t, path.join(ROOT, 'demo/cohort.csv'), path.join(ROOT, 'demo/demo.study.toml'), names);
  assertSameBytes(browser, cli, 'demo');

  assertNoTraffic(log);
  const longTasks = await page.evaluate(() => window.__longTasks);
  t.diagnostic(`long tasks (ms): ${longTasks.map((d) => Math.round(d)).join(', ') || 'none'}`);
  assert.ok(longTasks.every((d) => d < 200), `no main-thread task of 200 ms or more: ${longTasks}`);
  assertQuiet(log);
});

test('the report from the Export step opens from disk with no request and every section', async (t) => {
  const { page, log } = await openDemo(t);
  await step(page, 'export');
  assert.equal(await page.getByTestId('report-notes').isChecked(), false, 'notes are left out unless asked for');
  const report = await downloaded(page, 'export-report');
  assert.equal(report.name, 'pairsight-report.html');
  const dir = await scratch(t);
  const file = path.join(dir, report.name);
  await report.download.saveAs(file);
  const html = report.bytes.toString('utf8');
  assert.doesNotMatch(html, /<script/i, 'the report runs no script');

  const viewer = await page.context().newPage();
  const requests = [];
  viewer.on('request', (r) => requests.push(r.url()));
  const url = pathToFileURL(file).href;
  await viewer.goto(url);
  const sections = await viewer.locator('main > section').evaluateAll((s) => s.map((x) => x.id));
  assert.deepEqual(sections, ['data', 'designs', 'balance', 'overlap', 'terms', 'effect', 'cautions', 'study']);
  for (const id of sections) assert.ok(await viewer.locator(`#${id}`).isVisible(), id);
  const charts = await viewer.locator('figure svg').evaluateAll((s) => s.map((x) => x.getBoundingClientRect().height > 100));
  assert.ok(charts.length >= 5 && charts.every(Boolean), `${charts.length} charts`);
  assert.ok(await viewer.locator('#effect h3', { hasText: 'Outcome readmit_30d' }).isVisible());
  assert.equal(await viewer.locator('#examples').count(), 0, 'no example notes');
  await screenshot(viewer, 'demo-report');
  assert.deepEqual(requests, [url], 'the report requested nothing but itself');
  assertNoTraffic(log, [url]);
  assertQuiet(log);
});

/** Open `data`, import `study`, run every design; returns the design names. */
async function openAndRun(page, data, study) {
  await step(page, 'data');
  await pickFile(page, data);
  await step(page, 'export');
  await page.getByTestId('import-study').setInputFiles(study);
  await page.locator('[data-testid="screen"][data-step="designs"]').waitFor();
  await page.getByTestId('run-all').click();
  await idle(page);
  await step(page, 'export');
  return page.getByTestId('export-design').locator('option').evaluateAll((os) => os.map((o) => o.value));
}

test('the page and the command line write the same bytes for two fixture cohorts', async (t) => {
  const { page, log } = await openApp(t, APP_URL);
  for (const [data, study] of [
    [fixture('small.csv'), fixture('small.study.toml')],
    [fixture('hostile.csv'), fixture('hostile.study.toml')],
  ]) {
    const names = await openAndRun(page, data, study);
    assert.ok(names.length >= 1, `${path.basename(data)}: designs ran`);
    const browser = await browserFiles(page, names);
    const cli = await cliFiles(t, data, study, names);
    assertSameBytes(browser, cli, path.basename(data));
  }
  assertNoTraffic(log);
  assertQuiet(log);
});

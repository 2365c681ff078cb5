// The whole design-and-diagnose workflow in the single file opened from
// disk: open a cohort, restore its study from a study file, edit a concept,
// run two designs, read balance, plots and pairs, export, and compare the
// exported matched data with the command line's, byte for byte.

import { test } from 'node:test';
import assert from 'node:assert/strict';
import { readFile, mkdtemp, writeFile, rm } from 'node:fs/promises';
import { existsSync } from 'node:fs';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { execFileSync } from 'node:child_process';
import { pathToFileURL } from 'node:url';
import { ROOT, SINGLE_FILE, assertQuiet, fixture, openApp, pickFile, screenshot } from './support.mjs';

const APP_URL = pathToFileURL(SINGLE_FILE).href;

/** The command-line program, built by `cargo build` (debug or release). */
function cliBinary() {
  for (const p of [process.env.PAIRSIGHT_CLI, path.join(ROOT, 'target/debug/pairsight'), path.join(ROOT, 'target/release/pairsight')]) {
    if (p && existsSync(p)) return p;
  }
  return null;
}

/** Click a step of the rail and wait for its screen. */
async function step(page, id) {
  await page.locator(`button.rail-button[data-step="${id}"]`).click();
  await page.locator(`[data-testid="screen"][data-step="${id}"]`).waitFor();
}

/** Wait until no engine work is running. */
async function idle(page) {
  await page.waitForFunction(() => document.querySelector('[data-testid="progress"]').hidden, null, { timeout: 60_000 });
}

/** How many pixels of a canvas are not white (or transparent). */
function ink(page, testId) {
  return page.evaluate((id) => {
    const canvas = document.querySelector(`[data-testid="${id}"]`);
    if (!canvas || !canvas.width) return 0;
    const data = canvas.getContext('2d').getImageData(0, 0, canvas.width, canvas.height).data;
    let n = 0;
    for (let i = 0; i < data.length; i += 4) {
      if (data[i + 3] > 0 && (data[i] < 200 || data[i + 1] < 200 || data[i + 2] < 200)) n += 1;
    }
    return n;
  }, testId);
}

/** Click `testId` and return the downloaded file's name and text. */
async function downloadText(page, testId) {
  const [download] = await Promise.all([page.waitForEvent('download'), page.getByTestId(testId).click()]);
  const file = await download.path();
  return { name: download.suggestedFilename(), bytes: await readFile(file) };
}

test('the workflow end to end: roles, concepts, two designs, balance, pairs, exports', async (t) => {
  const { page, log } = await openApp(t, APP_URL);
  // Long tasks on the main thread, from the start (PerformanceObserver).
  await page.evaluate(() => {
    window.__longTasks = [];
    new PerformanceObserver((list) => {
      for (const e of list.getEntries()) window.__longTasks.push(e.duration);
    }).observe({ type: 'longtask', buffered: true });
  });

  // Data: open the file; the roles come from the study file below.
  await pickFile(page, fixture('small.csv'));
  assert.equal(await page.getByTestId('summary-shape').textContent(), '160 rows × 10 columns');
  assert.equal(await page.locator('[data-testid="role-select"]').count(), 10);
  await screenshot(page, 'app-data');

  // Export: import the study file (restores roles, concepts, designs).
  await step(page, 'export');
  await page.getByTestId('import-study').setInputFiles(fixture('small.study.toml'));
  await page.locator('[data-testid="screen"][data-step="designs"]').waitFor();
  assert.match(await page.getByTestId('notice').textContent(), /2 designs, 3 concepts/);

  // Data again: the roles are shown as the study file set them.
  await step(page, 'data');
  assert.equal(await page.locator('[data-testid="role-select"][data-col="early_plan"]').inputValue(), 'group');
  assert.equal(await page.locator('[data-testid="role-select"][data-col="admission_note"]').inputValue(), 'notes');
  await page.getByTestId('check-roles').click();
  await page.locator('[data-testid="screen"][data-step="notes"]').waitFor();
  await idle(page);

  // Notes: edit a concept (one more phrase for "frail"), apply, preview.
  const frail = page.getByTestId('concept-card').nth(1);
  assert.equal(await frail.getByTestId('concept-name').inputValue(), 'frail');
  await frail.getByTestId('concept-terms').fill('walking frame\nfrail\nwalks with a stick\nuses a walking frame');
  assert.equal(await page.getByTestId('concepts-dirty').isVisible(), true);
  await page.getByTestId('apply-concepts').click();
  await idle(page);
  await page.getByTestId('preview-note').first().waitFor();
  assert.equal(await page.getByTestId('concepts-dirty').isHidden(), true);
  assert.ok(await page.locator('[data-testid="note-preview"] mark.mention').count() > 0, 'the preview marks mentions');
  assert.ok(await page.locator('[data-testid="feature-spread"] tr[data-feature="concept.frail"]').count() === 1);
  await screenshot(page, 'app-notes');

  // Designs: run both.
  await step(page, 'designs');
  assert.equal(await page.getByTestId('design-card').count(), 2);
  await page.getByTestId('run-all').click();
  await idle(page);
  const results = page.locator('[data-testid="design-result"][data-matched]');
  assert.equal(await results.count(), 2);
  for (const r of await results.all()) assert.ok(Number(await r.getAttribute('data-matched')) > 0);
  await screenshot(page, 'app-designs');

  // Balance: table rows for structured and note-derived terms; plots have ink.
  await step(page, 'balance');
  await page.waitForFunction(() => document.querySelector('[data-testid="overlap-plot"]').dataset.drawn === 'true', null, { timeout: 60_000 });
  const table = page.getByTestId('balance-table');
  assert.ok(await table.locator('tr[data-note="false"][data-term="age"]').count() === 1, 'a structured row');
  assert.ok(await table.locator('tr[data-note="true"][data-term="concept.frail"]').count() === 1, 'a note-derived row');
  assert.match(await table.locator('thead').textContent(), /After: structured.*After: with-notes/);
  assert.ok((await ink(page, 'love-plot')) > 2000, 'the Love plot has ink');
  assert.ok((await ink(page, 'overlap-plot')) > 2000, 'the overlap plot has ink');
  // Sorting by term puts the rows in alphabetical order.
  await table.locator('thead button.sort', { hasText: 'Term' }).click();
  const terms = await table.locator('tbody tr').evaluateAll((trs) => trs.map((tr) => tr.dataset.term));
  assert.deepEqual(terms, [...terms].sort((a, b) => a.localeCompare(b)));
  assert.ok(await page.getByTestId('term-row').count() > 0, 'the term shift lists words');
  await screenshot(page, 'app-balance');

  // Side by side: walk until both kinds of mention have been seen.
  await step(page, 'pairs');
  const view = page.getByTestId('pair-view');
  await view.getByTestId('pair-note').first().waitFor();
  assert.equal(await view.getByTestId('pair-note').count(), 2);
  assert.match(await page.getByTestId('shortcuts').textContent(), /next.*previous.*largest.*random/);
  let seen = { affirmed: false, negated: false };
  for (let i = 0; i < 60 && !(seen.affirmed && seen.negated); i += 1) {
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
  assert.deepEqual(seen, { affirmed: true, negated: true });
  assert.match(await view.getByTestId('mention-legend').textContent(), /affirmed.*negated/);
  await page.getByTestId('pair-order').selectOption('largest');
  await idle(page);
  assert.match(await page.getByTestId('pair-position').textContent(), /showing 1 of/);
  await screenshot(page, 'app-pairs');

  // Export: every file downloads and parses; matched.csv equals the CLI's.
  await step(page, 'export');
  const matched = await downloadText(page, 'export-matched');
  assert.equal(matched.name, 'structured-matched.csv');
  assert.equal(matched.bytes.toString('utf8').split('\n')[0], 'set,id,group,weight,distance');
  const balance = await downloadText(page, 'export-balance');
  assert.match(balance.bytes.toString('utf8').split('\n')[0], /^term,kind,smd_before,smd_after/);
  const svg = await downloadText(page, 'export-love-svg');
  assert.match(svg.bytes.toString('utf8'), /^<svg[\s\S]*<\/svg>\s*$/);
  const png = await downloadText(page, 'export-love-png');
  assert.deepEqual([...png.bytes.subarray(0, 8)], [137, 80, 78, 71, 13, 10, 26, 10], 'PNG signature');
  const study = await downloadText(page, 'export-study');
  const studyText = study.bytes.toString('utf8');
  assert.match(studyText, /uses a walking frame/);
  await screenshot(page, 'app-export');

  const cli = cliBinary();
  if (!cli) {
    t.diagnostic('no pairsight binary under target/: build it with `cargo build -p pairsight-cli` for the byte-for-byte check');
    assert.fail('the command-line program is needed for the byte-for-byte comparison');
  }
  const dir = await mkdtemp(path.join(tmpdir(), 'pairsight-cli-'));
  t.after(() => rm(dir, { recursive: true, force: true }));
  await writeFile(path.join(dir, 'exported.study.toml'), studyText);
  execFileSync(cli, ['match', fixture('small.csv'), '--study', path.join(dir, 'exported.study.toml'), '--out', path.join(dir, 'out')], { stdio: 'pipe' });
  const cliMatched = await readFile(path.join(dir, 'out', 'structured', 'matched.csv'));
  assert.ok(cliMatched.equals(matched.bytes), 'matched.csv from the page equals the command line’s, byte for byte');
  const cliBalance = await readFile(path.join(dir, 'out', 'structured', 'balance.csv'));
  assert.ok(cliBalance.equals(balance.bytes), 'balance.csv too');

  // Nothing left the page; the main thread never blocked for 200 ms or more.
  const elsewhere = log.requests.filter((url) => !url.startsWith('blob:') && url.split('#')[0] !== APP_URL);
  assert.deepEqual(elsewhere, [], 'requests besides the file itself');
  const longTasks = await page.evaluate(() => window.__longTasks);
  t.diagnostic(`long tasks (ms): ${longTasks.map((d) => Math.round(d)).join(', ') || 'none'}`);
  assert.ok(longTasks.every((d) => d < 200), `no main-thread task of 200 ms or more: ${longTasks}`);
  assertQuiet(log);
});

test('settings survive a reload; note text is not stored', async (t) => {
  const { page, log } = await openApp(t, APP_URL);
  await pickFile(page, fixture('small.csv'));
  await page.locator('[data-testid="role-select"][data-col="age"]').selectOption('covariate');
  await page.locator('[data-testid="role-select"][data-col="admission_note"]').selectOption('notes');
  await page.reload();
  await page.getByTestId('core-version').and(page.locator('[data-version]')).waitFor();
  await pickFile(page, fixture('small.csv'));
  assert.equal(await page.locator('[data-testid="role-select"][data-col="age"]').inputValue(), 'covariate');
  assert.equal(await page.locator('[data-testid="role-select"][data-col="admission_note"]').inputValue(), 'notes');
  const stored = await page.evaluate(() => Object.keys(localStorage).map((k) => k + '=' + localStorage.getItem(k)).join('\n'));
  assert.doesNotMatch(stored, /shortness of breath|denies falls|lives alone/i, 'no note text in storage');
  assertQuiet(log);
});

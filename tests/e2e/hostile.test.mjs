// The hostile cohort (tests/fixtures/hostile.csv: markup, script, template
// and formula payloads in notes, column names, category labels and ids)
// walked through every step of the app, opened from disk: no dialog opens,
// no payload runs, no element of a payload reaches the page, the payloads
// show literally as text, and the CSV files the Export step writes are safe
// to open in a spreadsheet.

import { test } from 'node:test';
import assert from 'node:assert/strict';
import { readFile } from 'node:fs/promises';
import path from 'node:path';
import { pathToFileURL } from 'node:url';
import { assertQuiet, csvRows, fixture, formulaCells, openBrowser, screenshot, waitForEngine } from './support.mjs';
import { scratch } from './cli.mjs';
import { APP_URL, NO_STRAY_MARKUP, downloaded, idle, step, strayMarkup, trapPayloads } from './flow.mjs';

/** The hostile fixture's header and rows (cells as written). */
async function hostileTable() {
  const rows = csvRows(await readFile(fixture('hostile.csv'), 'utf8')).filter((r) => r.length > 1);
  return { header: rows[0], rows: rows.slice(1) };
}

/** Text of the elements matching `selector`, without screen-reader-only words. */
function visibleTexts(page, selector) {
  return page.locator(selector).evaluateAll((nodes) =>
    nodes.map((n) => {
      const copy = n.cloneNode(true);
      for (const hidden of copy.querySelectorAll('.visually-hidden')) hidden.remove();
      return copy.textContent;
    }),
  );
}

test('markup in the hostile cohort stays inert and literal on every step of the app', { timeout: 300_000 }, async (t) => {
  const { header, rows } = await hostileTable();
  const noteColumn = '</textarea><b>note</b>';
  const imgColumn = '<img src=x onerror=alert(1)>';
  assert.ok(header.includes(noteColumn) && header.includes(imgColumn), 'the fixture has the payload columns');
  const notes = rows.map((r) => r[header.indexOf(noteColumn)]);
  // Kinds of payload: distinct cells carrying markup, script URLs,
  // template or formula syntax, encoded markup or invisible controls.
  const payload = /[<>{}$=@&%\\]|javascript:|^[-+\t]|[\u0000\u200b-\u200f\u2028\u2029\u202a-\u202e\ufeff]/;
  const kinds = new Set([...header, ...rows.flat()].filter((c) => payload.test(c)));
  assert.ok(kinds.size >= 20, `at least 20 kinds of payload (${kinds.size})`);
  assert.ok(new Set([...header, ...rows.flat()].filter((c) => c.includes('<'))).size >= 10, 'markup among them');

  const { context, page, log } = await openBrowser(t);
  const trap = await trapPayloads(page);
  await page.goto(APP_URL);
  await waitForEngine(page);
  const visited = [];

  /** Nothing ran, nothing from a payload is in the page, nothing went wrong. */
  async function inert(where) {
    visited.push(where);
    assert.deepEqual(trap.dialogs, [], `${where}: dialogs`);
    assert.deepEqual(await trap.calls(), [], `${where}: calls a payload would make`);
    assert.deepEqual(await strayMarkup(page), NO_STRAY_MARKUP, `${where}: elements or attributes from a payload`);
    assert.equal(page.url(), APP_URL, `${where}: the page did not navigate`);
    assert.equal(await page.evaluate(() => document.baseURI), APP_URL, `${where}: no <base> took effect`);
    assert.equal(await page.getByTestId('error-banner').isHidden(), true, `${where}: ${await page.getByTestId('error-banner').innerText()}`);
    assertQuiet(log);
    await screenshot(page, `hostile-${where}`);
  }

  // Data: the column names are listed as text.
  await step(page, 'data');
  await page.getByTestId('file-input').setInputFiles(fixture('hostile.csv'));
  await page.getByTestId('summary').waitFor();
  const names = await page.locator('[data-testid="column-table"] th.column-name').allTextContents();
  assert.deepEqual(names, header.map((h) => h.trim()), 'every column name, literally');
  assert.equal(await page.locator(`[data-testid="role-select"][data-col="${imgColumn}"]`).count(), 1, 'a payload in an attribute stays one attribute value');

  // Export: the study file restores the roles and the design.
  await step(page, 'export');
  await page.getByTestId('import-study').setInputFiles(fixture('hostile.study.toml'));
  await page.locator('[data-testid="screen"][data-step="designs"]').waitFor();
  await step(page, 'data');
  await inert('data');

  // Note features: the preview shows notes (with the concept's marks) as text.
  await page.getByTestId('check-roles').click();
  await page.locator('[data-testid="screen"][data-step="notes"]').waitFor();
  await idle(page);
  await page.getByTestId('preview-note').first().waitFor();
  const previews = await visibleTexts(page, '[data-testid="preview-note"]');
  assert.ok(previews.some((p) => p.includes('<script>alert(1)</script>')), `a script payload shown as text: ${previews.slice(0, 3)}`);
  assert.ok(previews.every((p) => notes.some((n) => p.includes(n.replace(/\s+/g, ' ').trim().slice(0, 20)))), 'previews are the notes');
  assert.ok(await page.locator('[data-testid="note-preview"] mark.mention').count() > 0, 'the concept marks its terms inside the payloads');
  assert.equal(await page.getByTestId('concept-terms').inputValue(), '<script>\nalert\njavascript:', 'concept terms in a text box, as text');
  await inert('notes');

  // Designs: run.
  await step(page, 'designs');
  await page.getByTestId('run-all').click();
  await page.locator('[data-testid="design-result"][data-matched]').waitFor({ timeout: 120_000 });
  await idle(page);
  await inert('designs');

  // Balance: category labels and the column name as row headers.
  await step(page, 'balance');
  await page.waitForFunction(() => document.querySelector('[data-testid="overlap-plot"]').dataset.drawn === 'true', null, { timeout: 60_000 });
  const terms = await page.locator('[data-testid="balance-table"] tbody th').allTextContents();
  for (const want of [imgColumn, '=HYPERLINK("http://example.invalid","x")', '@risk', '-flag', 'unit=<script>alert(1)</script>', 'unit="><svg onload=alert(1)>', 'unit={{7*7}}', "unit==cmd|' /C calc'!A0"]) {
    assert.ok(terms.includes(want), `balance row ${want}: ${terms}`);
  }
  await inert('balance');

  // Side by side: walk the pairs until a note payload has been seen.
  await step(page, 'pairs');
  await page.getByTestId('pair-note').first().waitFor();
  const shown = new Set();
  const wanted = ['<script>alert(1)</script>', '"><svg onload=alert(1)>', '<img src=x onerror=alert(1)>', '<iframe src="javascript:alert(1)"></iframe>', '<base href="http://example.invalid/">'];
  const sets = Number((await page.getByTestId('pair-position').textContent()).match(/of (\d+)/)?.[1] ?? 0);
  assert.ok(sets > 0, 'matched sets to show');
  for (let i = 0; i < sets; i += 1) {
    for (const text of await visibleTexts(page, '[data-testid="pair-note"]')) shown.add(text);
    if (wanted.every((w) => [...shown].some((s) => s.includes(w)))) break;
    const before = await page.getByTestId('pair-position').textContent();
    await page.keyboard.press('j');
    await page.waitForFunction((b) => document.querySelector('[data-testid="pair-position"]').textContent !== b, before);
    await idle(page);
  }
  const seenPayloads = wanted.filter((w) => [...shown].some((s) => s.includes(w)));
  assert.ok(seenPayloads.length >= 2, `note payloads shown literally side by side: ${seenPayloads}`);
  assert.ok([...shown].every((s) => notes.some((n) => s === n || s.includes(n.trim().slice(0, 15)) || s === '(no note)')), 'the notes, not something else');
  const fields = await page.getByTestId('pair-fields').textContent();
  assert.ok(fields.includes(imgColumn), 'the column name in the difference table, as text');
  await inert('pairs');

  // Review: a round with the payload column shown beside the notes.
  await step(page, 'review');
  await page.getByTestId('round-sets').fill('3');
  await page.getByTestId('round-reviewers').fill('rev-a');
  await page.locator(`[data-testid="round-panel"] input[data-field="${imgColumn}"]`).check();
  await page.getByTestId('round-draw').click();
  await page.getByTestId('round-summary').waitFor({ timeout: 60_000 });
  await idle(page);
  const packet = await downloaded(page, page.locator('[data-testid="download-packet"][data-reviewer="rev-a"]'));
  await inert('review');

  // Effect: estimates with their cautions.
  await step(page, 'effect');
  await page.getByTestId('outcome').first().waitFor({ timeout: 60_000 });
  await idle(page);
  assert.match(await page.getByTestId('effect-caution').first().textContent(), /no unmeasured confounding/);
  await inert('effect');

  // Export: every CSV is safe in a spreadsheet and keeps the payloads,
  // guarded; the report (with notes, the user's explicit choice) and the
  // packet open inert.
  await step(page, 'export');
  const csv = {};
  for (const [file, id] of [['matched.csv', 'export-matched'], ['balance.csv', 'export-balance'], ['score.csv', 'export-score']]) {
    const got = await downloaded(page, id);
    csv[file] = got.bytes.toString('utf8');
    assert.deepEqual(formulaCells(csv[file]), [], `${file}: no cell a spreadsheet would run`);
  }
  const ids = csvRows(csv['score.csv']).slice(1).map((r) => r[0]);
  // Ids are trimmed of white space around them (the tab of "\t=tab" too).
  for (const want of ["'=1+1", "'@x", "'+7", "'-5", '<script>alert(1)</script>', "'=tab"]) {
    assert.ok(ids.includes(want), `score.csv id ${JSON.stringify(want)} (guarded with an apostrophe when it starts a formula): ${ids}`);
  }
  const balanceTerms = csvRows(csv['balance.csv']).slice(1).map((r) => r[0]);
  assert.ok(balanceTerms.includes("'=HYPERLINK(\"http://example.invalid\",\"x\")"), 'a formula column name, guarded');
  assert.ok(balanceTerms.includes("'@risk") && balanceTerms.includes("'-flag"), `guarded column names: ${balanceTerms}`);
  const study = await downloaded(page, 'export-study');
  assert.ok(study.bytes.toString('utf8').includes('notes = "</textarea><b>note</b>"'), 'the study file keeps the name as TOML text');
  await page.getByTestId('report-notes').check();
  const report = await downloaded(page, 'export-report');
  await inert('export');

  const dir = await scratch(t);
  for (const [name, file] of [['report', report], ['packet', packet]]) {
    const saved = path.join(dir, file.name);
    await file.download.saveAs(saved);
    const viewer = await context.newPage();
    const viewerTrap = await trapPayloads(viewer);
    const url = pathToFileURL(saved).href;
    await viewer.goto(url);
    await viewer.waitForLoadState('load');
    if (name === 'packet') await viewer.locator('#app:not([hidden])').waitFor();
    const text = await viewer.locator('body').textContent();
    assert.ok(text.includes(imgColumn), `${name}: the column name as text`);
    const dom = await viewer.evaluate(() => ({
      img: document.querySelectorAll('img').length,
      iframe: document.querySelectorAll('iframe').length,
      base: document.querySelectorAll('base').length,
      bold: document.querySelectorAll('b').length,
      strays: [...document.querySelectorAll('svg')].filter((s) => !s.closest('figure')).length,
    }));
    assert.deepEqual(dom, { img: 0, iframe: 0, base: 0, bold: 0, strays: 0 }, `${name}: no element from a payload`);
    assert.deepEqual(viewerTrap.dialogs, [], `${name}: dialogs`);
    assert.deepEqual(await viewerTrap.calls(viewer), [], `${name}: calls a payload would make`);
    await screenshot(viewer, `hostile-${name}-from-app`);
    await viewer.close();
  }

  assert.deepEqual(visited, ['data', 'notes', 'designs', 'balance', 'pairs', 'review', 'effect', 'export'], 'every step visited');
  const elsewhere = log.requests.filter((url) => !url.startsWith('blob:') && url.split('#')[0] !== APP_URL && !url.startsWith('file://' + dir));
  assert.deepEqual(elsewhere, [], 'requests besides the files themselves');
  assertQuiet(log);
});

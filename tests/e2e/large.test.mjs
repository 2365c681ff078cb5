// Large input in the page: a generated 200 MB cohort file is read by the
// worker in chunks with progress, within the memory bound stated in
// docs/validation.md, and the page stays usable; a file over the page's
// limit is refused before any of it is read, with the limit named.
//
// Sizes here are facts of the file; no assertion is about time (a loaded
// machine must not fail a correct program). Times are printed.

import { test } from 'node:test';
import assert from 'node:assert/strict';
import { mkdtemp, open, rm, truncate, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { pathToFileURL } from 'node:url';
import { SINGLE_FILE, assertQuiet, fixture, openApp, pickFile, screenshot, seededRandom } from './support.mjs';

const APP_URL = pathToFileURL(SINGLE_FILE).href;
const TARGET_BYTES = 200_000_000;
const MB = 1e6;

// The bound stated in docs/validation.md: the engine's WebAssembly memory
// after reading a UTF-8 file of S bytes is at most 2 S + 64 MiB (the file's
// bytes and its cells, each column measured first so that no buffer grows
// by doubling; 64 MiB for the engine itself and the row index).
const memoryBound = (size) => 2 * size + 64 * 2 ** 20;

/**
 * Write an invented cohort (no real data) of at least `target` bytes to
 * `file`, in batches, from a fixed seed; resolves with its rows and size.
 */
async function writeLargeCohort(file, target, seed = 2026) {
  const rand = seededRandom(seed);
  const pick = (list) => list[Math.floor(rand() * list.length)];
  const sentences = [
    'Lives alone in a first-floor flat.',
    'Uses a walking frame indoors.',
    'Recent fall at home, no head injury.',
    'Denies falls in the last year.',
    'Family visit daily and help with shopping.',
    'Slept poorly, asked for the light on.',
    'Bloods sent this morning; awaiting results.',
    'Observations stable overnight.',
    'Eating and drinking well with some help.',
    'Daughter asks about support at home after discharge.',
  ];
  const handle = await open(file, 'w');
  let size = 0;
  let rows = 0;
  let batch = ['patient_id,early_plan,age,sex,ward,prior_admits,readmit_30d,admission_note\n'];
  let batchBytes = batch[0].length;
  try {
    while (size + batchBytes < target) {
      rows += 1;
      const note = Array.from({ length: 28 }, () => pick(sentences)).join(' ');
      const line = `P${String(rows).padStart(7, '0')},${rand() < 0.4 ? 1 : 0},${45 + Math.floor(rand() * 48)},${pick(['F', 'M'])},${pick(['east', 'west', 'north'])},${Math.floor(rand() * 4)},${rand() < 0.2 ? 1 : 0},"${note}"\n`;
      batch.push(line);
      batchBytes += line.length; // ASCII: characters are bytes
      if (batchBytes >= 4 * MB) {
        await handle.write(batch.join(''));
        size += batchBytes;
        batch = [];
        batchBytes = 0;
      }
    }
    await handle.write(batch.join(''));
    size += batchBytes;
  } finally {
    await handle.close();
  }
  return { rows, size };
}

test('a 200 MB cohort file is read in chunks with progress, within the stated memory bound', async (t) => {
  const dir = await mkdtemp(path.join(tmpdir(), 'pairsight-large-'));
  t.after(() => rm(dir, { recursive: true, force: true }));
  const csv = path.join(dir, 'cohort-200mb.csv');
  const { rows, size } = await writeLargeCohort(csv, TARGET_BYTES);
  assert.ok(size >= TARGET_BYTES - 4 * MB, `the generated file is about 200 MB (${size} bytes)`);

  const { page, log } = await openApp(t, APP_URL);
  const started = Date.now();
  await page.getByTestId('file-input').setInputFiles(csv);
  // Watch the progress strip while the worker reads: the page's main
  // thread must keep answering, and the bar must move.
  const seen = [];
  for (;;) {
    const state = await page.evaluate(() => {
      const strip = document.querySelector('[data-testid="progress"]');
      const done = document.querySelector('[data-testid="summary"]:not([hidden]), [data-testid="error-banner"]:not([hidden])');
      return {
        hidden: strip.hidden,
        label: strip.querySelector('.progress-label')?.textContent ?? '',
        value: strip.querySelector('progress')?.value ?? null,
        done: Boolean(done),
      };
    });
    if (!state.hidden) seen.push(state);
    if (state.done) break;
    assert.ok(Date.now() - started < 600_000, 'the file is read within ten minutes');
    await page.waitForTimeout(100);
  }
  const seconds = (Date.now() - started) / 1000;
  t.diagnostic(`read ${(size / MB).toFixed(0)} MB, ${rows} rows, in ${seconds.toFixed(1)} s; ${seen.length} progress samples`);
  assert.equal(await page.getByTestId('error-banner').isHidden(), true, await page.getByTestId('error-banner').textContent());
  const values = seen.map((s) => s.value).filter((v) => typeof v === 'number');
  assert.ok(new Set(values).size >= 3, `the bar moved through several values: ${values.join(', ')}`);
  for (let i = 1; i < values.length; i += 1) assert.ok(values[i] >= values[i - 1], 'the bar never goes back');
  assert.ok(seen.some((s) => /loading \d+ of \d+ MB/.test(s.label)), 'the label says how much is loaded');
  assert.ok(seen.some((s) => /reading rows, \d+%/.test(s.label)), 'the label says how far reading is');

  // The summary counts every row.
  const shown = await page.getByTestId('summary-rows').textContent();
  assert.equal(Number(shown.replace(/\D/g, '')), rows, `rows shown: ${shown}`);
  assert.equal(await page.locator('[data-testid="column-row"]').count(), 8);
  // The roles guessed: the id is not taken for the notes (both are text).
  assert.match(await page.getByTestId('roles-recap').textContent(), /id: patient_id .*notes: admission_note/i);
  assert.equal(await page.locator('[data-testid="role-select"][data-col="admission_note"]').inputValue(), 'notes');

  // The engine's memory, measured in its worker.
  const [worker] = page.workers();
  const memory = await worker.evaluate(() => wasm_bindgen.engine_memory());
  t.diagnostic(`engine memory after reading: ${(memory / MB).toFixed(0)} MB (${(memory / size).toFixed(2)} times the file); bound ${(memoryBound(size) / MB).toFixed(0)} MB`);
  assert.ok(memory <= memoryBound(size), `engine memory ${memory} within the bound ${memoryBound(size)}`);
  await screenshot(page, 'large-200mb');

  // The note features of all 181,876 notes are computed in the worker too:
  // the page keeps answering and the Note features step shows them.
  const prepStarted = Date.now();
  await page.getByTestId('check-roles').click();
  await page.locator('[data-testid="screen"][data-step="notes"]').waitFor({ timeout: 600_000 });
  await page.locator('[data-testid="feature-spread"] tr[data-feature="note.tokens"]').waitFor({ timeout: 600_000 });
  const afterNotes = await worker.evaluate(() => wasm_bindgen.engine_memory());
  t.diagnostic(`note features of ${rows} notes in ${((Date.now() - prepStarted) / 1000).toFixed(1)} s; engine memory then ${(afterNotes / MB).toFixed(0)} MB`);
  assert.equal(await page.getByTestId('error-banner').isHidden(), true);

  // The page carries on: a small file opens over the large one.
  await page.locator('button.rail-button[data-step="data"]').click();
  await pickFile(page, fixture('small.csv'));
  assert.equal(await page.getByTestId('error-banner').isHidden(), true);
  assert.equal(await page.getByTestId('summary').isVisible(), true);
  assertQuiet(log);
});

test('a file over the page limit is refused before it is read, naming the limit and the way out', async (t) => {
  const dir = await mkdtemp(path.join(tmpdir(), 'pairsight-large-'));
  t.after(() => rm(dir, { recursive: true, force: true }));
  // A sparse file: 1.2 GB to the browser, nothing on disk.
  const csv = path.join(dir, 'too-large.csv');
  await writeFile(csv, 'patient_id,early_plan\n');
  await truncate(csv, 1_200_000_000);

  const { page, log } = await openApp(t, APP_URL);
  await pickFile(page, csv);
  const banner = page.getByTestId('error-banner');
  assert.equal(await banner.isVisible(), true);
  const text = await banner.textContent();
  assert.match(text, /1200\.0 MB/, 'the file size');
  assert.match(text, /up to 1000\.0 MB/, 'the limit');
  assert.match(text, /pairsight match/, 'the way out');
  // Nothing was read into the engine.
  const [worker] = page.workers();
  const memory = await worker.evaluate(() => wasm_bindgen.engine_memory());
  assert.ok(memory < 200 * MB, `the engine did not take the file in (${memory} bytes)`);
  // The page carries on.
  await pickFile(page, fixture('small.csv'));
  assert.equal(await page.getByTestId('summary').isVisible(), true);
  assertQuiet(log);
});

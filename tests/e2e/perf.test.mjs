// Browser timings of each step, PRINTED (never asserted: a loaded machine
// must not fail a correct program). Runs on an invented cohort made here
// with a fixed seed: 3,000 patients always, 50,000 when PAIRSIGHT_PERF=1.
// The numbers go to docs/performance.md by hand.

import { test } from 'node:test';
import assert from 'node:assert/strict';
import { mkdtemp, writeFile, rm } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { pathToFileURL } from 'node:url';
import { SINGLE_FILE, assertQuiet, openApp, pickFile, seededRandom } from './support.mjs';

const APP_URL = pathToFileURL(SINGLE_FILE).href;

/** An invented cohort of `n` patients (no real data): CSV text. */
function inventCohort(n, seed = 7) {
  const rand = seededRandom(seed);
  const phrases = ['lives alone', 'uses a walking frame', 'recent fall', 'denies falls', 'no chest pain', 'family visiting daily', 'poor sleep', 'bloods sent', 'obs stable overnight'];
  const rows = ['patient_id,early_plan,age,sex,ward,prior_admits,creatinine,readmit_30d,length_of_stay,admission_note'];
  for (let i = 0; i < n; i += 1) {
    const age = 45 + Math.floor(rand() * 48);
    const alone = rand() < 0.35;
    const p = 1 / (1 + Math.exp(-(-1 + 0.02 * (age - 65) + (alone ? 0.8 : 0))));
    const treated = rand() < p ? 1 : 0;
    const note = [alone ? 'lives alone' : 'lives with family', ...Array.from({ length: 3 }, () => phrases[Math.floor(rand() * phrases.length)])].join('. ');
    rows.push(
      [
        `P${String(i + 1).padStart(6, '0')}`,
        treated,
        age,
        rand() < 0.5 ? 'F' : 'M',
        ['east', 'west', 'north'][Math.floor(rand() * 3)],
        Math.floor(-Math.log(1 - rand()) * 1.1),
        Math.round(50 + rand() * 80),
        rand() < 0.2 + (alone ? 0.1 : 0) - 0.05 * treated ? 1 : 0,
        (3 + rand() * 6).toFixed(1),
        `"${note}."`,
      ].join(','),
    );
  }
  return rows.join('\n') + '\n';
}

const STUDY = `
[columns]
id = "patient_id"
group = "early_plan"
treated = "1"
outcomes = ["readmit_30d", "length_of_stay"]
covariates = ["age", "sex", "ward", "prior_admits", "creatinine"]
notes = "admission_note"

[[concepts]]
name = "lives_alone"
terms = ["lives alone"]

[[concepts]]
name = "fall"
terms = ["fall", "falls"]

[[designs]]
name = "structured"
score_terms = ["age", "sex", "ward", "prior_admits", "creatinine"]
caliper = 0.2
algorithm = "greedy"

[[designs]]
name = "with-notes"
score_terms = ["age", "sex", "ward", "prior_admits", "creatinine", "concept.lives_alone", "concept.fall"]
caliper = 0.2
algorithm = "greedy"
`;

async function measure(t, n) {
  const dir = await mkdtemp(path.join(tmpdir(), 'pairsight-perf-'));
  t.after(() => rm(dir, { recursive: true, force: true }));
  const csv = path.join(dir, `cohort-${n}.csv`);
  await writeFile(csv, inventCohort(n));
  const study = path.join(dir, 'perf.study.toml');
  await writeFile(study, STUDY);

  const { page, log } = await openApp(t, APP_URL);
  await page.evaluate(() => {
    window.__longTasks = [];
    new PerformanceObserver((list) => {
      for (const e of list.getEntries()) window.__longTasks.push(e.duration);
    }).observe({ type: 'longtask', buffered: true });
  });
  const idle = () => page.waitForFunction(() => document.querySelector('[data-testid="progress"]').hidden, null, { timeout: 300_000, polling: 50 });
  const clock = async (what, fn) => {
    const t0 = Date.now();
    await fn();
    const ms = Date.now() - t0;
    t.diagnostic(`${n} patients: ${what}: ${ms} ms`);
    return ms;
  };
  await clock('read the file', () => pickFile(page, csv));
  await page.locator('button.rail-button[data-step="export"]').click();
  await page.getByTestId('import-study').setInputFiles(study);
  await page.locator('[data-testid="screen"][data-step="designs"]').waitFor();
  await page.locator('button.rail-button[data-step="notes"]').click();
  await clock('note features (prepare)', async () => {
    await idle();
    await page.getByTestId('preview-note').first().waitFor({ timeout: 300_000 });
  });
  await page.locator('button.rail-button[data-step="designs"]').click();
  await clock('run two designs', async () => {
    await page.getByTestId('run-all').click();
    await page.locator('[data-testid="design-result"][data-matched]').nth(1).waitFor({ timeout: 300_000 });
    await idle();
  });
  // Re-running a design after a design-only edit: notes are not recomputed.
  await page.getByTestId('design-controls').first().fill('2');
  await page.getByTestId('design-controls').first().dispatchEvent('change');
  await clock('re-run one edited design', async () => {
    await page.getByTestId('design-card').first().getByRole('button', { name: 'Run this design' }).click();
    await idle();
  });
  await clock('balance step with both plots', async () => {
    await page.locator('button.rail-button[data-step="balance"]').click();
    await page.waitForFunction(() => document.querySelector('[data-testid="overlap-plot"]')?.dataset.drawn === 'true', null, { timeout: 300_000 });
  });
  await clock('open a matched set side by side', async () => {
    await page.locator('button.rail-button[data-step="pairs"]').click();
    await page.getByTestId('pair-note').first().waitFor({ timeout: 300_000 });
  });
  const longTasks = await page.evaluate(() => window.__longTasks);
  t.diagnostic(`${n} patients: main-thread long tasks (ms): ${longTasks.map((d) => Math.round(d)).join(', ') || 'none'}`);
  assert.equal(await page.getByTestId('error-banner').isHidden(), true);
  assertQuiet(log);
}

test('timings of each step, 3,000 invented patients (printed)', async (t) => {
  await measure(t, 3000);
});

test('timings of each step, 50,000 invented patients (printed; PAIRSIGHT_PERF=1)', { skip: process.env.PAIRSIGHT_PERF !== '1' }, async (t) => {
  await measure(t, 50000);
});

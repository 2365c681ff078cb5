// The shipped app, dist/pairsight.html, opened straight from disk (file://),
// as a reviewer on a locked-down laptop would open it.

import { test } from 'node:test';
import assert from 'node:assert/strict';
import { readFile } from 'node:fs/promises';
import { pathToFileURL } from 'node:url';
import {
  SINGLE_FILE,
  assertQuiet,
  fixture,
  openApp,
  pickFile,
  screenshot,
  settled,
  waitForEngine,
  workspaceVersion,
} from './support.mjs';

const APP_URL = pathToFileURL(SINGLE_FILE).href;

/** The column table as {name: {kind, missing}} from the rows' attributes. */
async function columnTable(page) {
  const rows = await page.getByTestId('column-row').evaluateAll((trs) =>
    trs.map((tr) => [tr.dataset.column, { kind: tr.dataset.kind, missing: Number(tr.dataset.missing) }]),
  );
  return Object.fromEntries(rows);
}

test('a small cohort file is summarised: shape, encoding, delimiter, kinds, missing counts', async (t) => {
  const { page, log, version } = await openApp(t, APP_URL);
  assert.equal(version, await workspaceVersion());
  await pickFile(page, fixture('cohort_small.csv'));

  assert.equal(await page.getByTestId('error-banner').isHidden(), true);
  assert.equal(await page.getByTestId('summary-file').textContent(), 'cohort_small.csv');
  assert.equal(await page.getByTestId('summary-shape').textContent(), '12 rows × 12 columns');
  assert.equal(await page.getByTestId('summary-rows').textContent(), '12');
  assert.equal(await page.getByTestId('summary-encoding').textContent(), 'UTF-8');
  assert.equal(await page.getByTestId('summary-delimiter').textContent(), 'comma');
  // Expected values read off the 12-row fixture by hand (and recounted with
  // Python's csv module): kinds follow the core's stated rules, missing
  // cells are "", NA, NaN, "." and null.
  assert.deepEqual(await columnTable(page), {
    patient_id: { kind: 'numeric', missing: 0 },
    early_visit: { kind: 'binary', missing: 0 },
    age: { kind: 'numeric', missing: 1 },
    sex: { kind: 'categorical', missing: 0 },
    ward: { kind: 'categorical', missing: 0 },
    admission_route: { kind: 'categorical', missing: 1 },
    prior_admissions: { kind: 'numeric', missing: 0 },
    comorbidity_count: { kind: 'numeric', missing: 0 },
    sodium: { kind: 'numeric', missing: 2 },
    readmit_30d: { kind: 'binary', missing: 1 },
    length_of_stay: { kind: 'numeric', missing: 0 },
    admission_note: { kind: 'text', missing: 0 },
  });
  // What the table shows a reader, not only its attributes.
  const sodium = page.locator('[data-testid="column-row"][data-column="sodium"]');
  assert.match(await sodium.textContent(), /sodium\s*numeric\s*2 \(17%\)/);
  assert.match(await page.locator('.footnote').textContent(), /Counted as missing: empty cells, “na”/);
  await screenshot(page, 'summary');
  assertQuiet(log);
});

test('the single file makes no request besides itself', async (t) => {
  const { page, log } = await openApp(t, APP_URL);
  await pickFile(page, fixture('cohort_small.csv'));
  await page.goto(`${APP_URL}#demo`);
  await page.reload();
  await waitForEngine(page);
  await page.getByTestId('notice').waitFor();

  // The worker comes from a blob: URL made in memory by the page itself;
  // that is no network request. Anything else would be.
  const elsewhere = log.requests.filter((url) => !url.startsWith('blob:') && url.split('#')[0] !== APP_URL);
  assert.deepEqual(elsewhere, [], 'requests besides the file itself');
  assert.ok(log.requests.some((url) => url.split('#')[0] === APP_URL), 'the file itself was recorded');
  assert.deepEqual(
    await page.evaluate(() => performance.getEntriesByType('resource').map((e) => e.name)),
    [],
    'resource timing entries',
  );
  // The policy that forbids connections is on the page.
  const policy = await page.locator('meta[http-equiv="Content-Security-Policy"]').getAttribute('content');
  assert.match(policy, /default-src 'none'/);
  assert.match(policy, /connect-src 'none'/);
  assert.match(policy, /'wasm-unsafe-eval'/);
  assert.doesNotMatch(policy, /unsafe-inline/);
  await screenshot(page, 'no-network');
  assertQuiet(log);
});

test('the policy stops a connection attempt before it leaves the page', async (t) => {
  const { page, log } = await openApp(t, APP_URL);
  const outcome = await page.evaluate(async () => {
    const violations = [];
    document.addEventListener('securitypolicyviolation', (e) => violations.push(e.effectiveDirective));
    let sent;
    try {
      await fetch('https://example.invalid/collect', { method: 'POST', body: 'x' });
      sent = true;
    } catch {
      sent = false;
    }
    await new Promise((resolve) => setTimeout(resolve, 100));
    return { sent, violations };
  });
  assert.deepEqual(outcome, { sent: false, violations: ['connect-src'] });
  assert.deepEqual(log.requests.filter((url) => url.includes('example.invalid')), []);
  // The browser reports the blocked attempt on the console; that is the only
  // console error this test expects.
  assert.ok(log.consoleErrors.every((text) => /Content Security Policy/i.test(text)), log.consoleErrors.join('\n'));
});

test('a malformed file shows the error banner naming the row; a good file afterwards works', async (t) => {
  const { page, log } = await openApp(t, APP_URL);

  await pickFile(page, fixture('broken_ragged.csv'));
  const banner = page.getByTestId('error-banner');
  assert.equal(await banner.isVisible(), true);
  assert.equal(await banner.getAttribute('data-error-row'), '4');
  assert.match(await banner.textContent(), /Could not read “broken_ragged\.csv”/);
  assert.match(await page.getByTestId('error-where').textContent(), /^Row 4 \(the header is row 1\)$/);
  assert.match(await page.getByTestId('error-reason').textContent(), /4 fields but the header has 3/);
  assert.equal(await page.getByTestId('summary').isHidden(), true);
  await screenshot(page, 'error-banner');

  // A problem in the header names its column too.
  await pickFile(page, fixture('broken_duplicate_header.csv'));
  assert.equal(await banner.getAttribute('data-error-row'), '1');
  assert.equal(await banner.getAttribute('data-error-column'), 'age');
  assert.match(await page.getByTestId('error-where').textContent(), /Row 1 \(the header is row 1\), column “age”/);

  await pickFile(page, fixture('cohort_small.csv'));
  await page.getByTestId('summary').waitFor();
  assert.equal(await banner.isHidden(), true, await banner.textContent());
  assert.equal(await page.getByTestId('summary-shape').textContent(), '12 rows × 12 columns');
  await screenshot(page, 'recovered');
  assertQuiet(log);
});

test('a file dropped on the page opens like a picked one (semicolon, Latin-1)', async (t) => {
  const { page, log } = await openApp(t, APP_URL);
  const bytes = [...(await readFile(fixture('cohort_semicolon_latin1.csv')))];
  const highlighted = await page.evaluate((data) => {
    const transfer = new DataTransfer();
    transfer.items.add(new File([new Uint8Array(data)], 'ward_notes.csv', { type: 'text/csv' }));
    const zone = document.querySelector('[data-testid="drop-zone"]');
    zone.dispatchEvent(new DragEvent('dragenter', { dataTransfer: transfer, bubbles: true }));
    const over = zone.classList.contains('is-over');
    zone.dispatchEvent(new DragEvent('dragover', { dataTransfer: transfer, bubbles: true, cancelable: true }));
    zone.dispatchEvent(new DragEvent('drop', { dataTransfer: transfer, bubbles: true, cancelable: true }));
    return over;
  }, bytes);
  assert.equal(highlighted, true, 'the drop zone lights up while a file is dragged over');
  await settled(page);
  assert.equal(await page.getByTestId('summary-file').textContent(), 'ward_notes.csv');
  assert.equal(await page.getByTestId('summary-shape').textContent(), '3 rows × 4 columns');
  assert.equal(await page.getByTestId('summary-encoding').textContent(), 'Windows-1252');
  assert.equal(await page.getByTestId('summary-delimiter').textContent(), 'semicolon');
  assert.equal(await page.locator('[data-column="sodium"]').getAttribute('data-missing'), '1');
  assert.equal(await page.getByTestId('drop-zone').getAttribute('class'), 'dropzone is-compact');
  assertQuiet(log);
});

test('#demo opens the demo cohort and runs its designs', async (t) => {
  const { page, log } = await openApp(t, `${APP_URL}#demo`);
  // Every step of the rail is built: a button, none marked as coming.
  assert.equal(await page.locator('.rail-step.is-coming').count(), 0);
  assert.equal(await page.locator('.rail-step button.rail-button').count(), 8);
  assert.deepEqual(
    await page.locator('.rail-step').evaluateAll((xs) => xs.map((x) => x.dataset.step)),
    ['data', 'notes', 'designs', 'balance', 'pairs', 'review', 'effect', 'export'],
  );
  const notice = page.locator('[data-testid="notice"]:not([hidden])', { hasText: /^Demo:/ });
  await notice.waitFor({ timeout: 180_000 });
  await page.locator('[data-testid="screen"][data-step="balance"]').waitFor();
  assert.equal(await page.getByTestId('summary-file').count(), 0, 'the demo moved on from the data step');
  assert.ok((await page.getByTestId('balance-row').count()) > 10, 'the balance table of the demo designs');
  assert.equal(await page.getByTestId('error-banner').isHidden(), true);
  await screenshot(page, 'demo-hash');
  assertQuiet(log);
});

// The report as a collaborator opens it: from disk, in headless Chromium,
// with zero network requests, every section present, and markup from the
// data shown literally with no dialog.

import { test } from 'node:test';
import assert from 'node:assert/strict';
import { readFile, writeFile } from 'node:fs/promises';
import path from 'node:path';
import { pathToFileURL } from 'node:url';
import { assertQuiet, fixture, openBrowser, screenshot } from './support.mjs';
import { hostileCohort, pairsight, scratch } from './cli.mjs';

/** Open `file` from disk; returns the page, the request log and the dialogs seen. */
async function openReport(t, file) {
  const { page, log } = await openBrowser(t);
  const dialogs = [];
  page.on('dialog', async (d) => {
    dialogs.push(d.message());
    await d.dismiss();
  });
  const url = pathToFileURL(file).href;
  await page.goto(url);
  await page.waitForLoadState('load');
  return { page, log, dialogs, url };
}

test('the report opens from disk with no request and shows every section', async (t) => {
  const dir = await scratch(t);
  // A rated round first, so the expert-review section is there too.
  let r = pairsight(['packet', fixture('small.csv'), '--study', fixture('small.study.toml'), '--out', dir,
    '--reviewers', 'rev-a,rev-b', '--sets-per-design', '6']);
  assert.equal(r.status, 0, r.stderr);
  const key = JSON.parse(await readFile(path.join(dir, 'round-key.json'), 'utf8'));
  const files = [];
  for (const [who, shift] of [['rev-a', 0], ['rev-b', 1]]) {
    const lines = ['round_id,pair_key,reviewer,rating,comment,time'];
    key.round.items.forEach((it, i) => {
      lines.push(`${key.round.round_id},${it.pair_key},${who},${((i + shift) % 5) + 1},,2025-03-04T10:15:00.000Z`);
    });
    const f = path.join(dir, `ratings-${who}.csv`);
    await writeFile(f, lines.join('\r\n') + '\r\n');
    files.push(f);
  }
  const out = path.join(dir, 'report.html');
  r = pairsight(['report', fixture('small.csv'), '--study', fixture('small.study.toml'), '--out', out,
    '--round', path.join(dir, 'round-key.json'), '--ratings', ...files]);
  assert.equal(r.status, 0, r.stderr);

  const { page, log, dialogs, url } = await openReport(t, out);
  const sections = await page.locator('main > section').evaluateAll((s) =>
    s.map((x) => [x.id, x.querySelector('h2').textContent]),
  );
  assert.deepEqual(sections, [
    ['data', 'Data'],
    ['designs', 'Designs'],
    ['balance', 'Balance'],
    ['overlap', 'Score overlap'],
    ['terms', 'Term shift'],
    ['review', 'Expert review'],
    ['effect', 'Effect and sensitivity'],
    ['cautions', 'Cautions'],
    ['study', 'Study file'],
  ]);
  for (const [id] of sections) assert.ok(await page.locator(`#${id}`).isVisible(), id);
  // Charts are inline SVG that the browser lays out with real size.
  const charts = await page.locator('figure svg').evaluateAll((s) =>
    s.map((x) => x.getBoundingClientRect().height > 100),
  );
  assert.ok(charts.length >= 5 && charts.every(Boolean), `${charts.length} charts`);
  assert.ok(await page.locator('#review th', { hasText: 'weighted kappa (quadratic), rev-a and rev-b' }).isVisible());
  assert.ok(await page.locator('#effect h3', { hasText: 'Outcome readmit_30d' }).isVisible());
  // The study file is there for reproduction, behind a disclosure.
  await page.locator('#study summary').click();
  assert.match(await page.locator('pre.study').textContent(), /\[\[designs\]\]\s+name = "structured"/);
  // No note text without the opt-in.
  assert.equal(await page.getByText('shortness of breath').count(), 0);
  await screenshot(page, 'report');
  assert.deepEqual(log.requests, [url], 'the report requested nothing but itself');
  assert.deepEqual(dialogs, []);
  assert.equal(await page.evaluate(() => document.scripts.length), 0);
  assertQuiet(log);
});

test('markup in notes, labels and column names shows literally in the report', async (t) => {
  const dir = await scratch(t);
  const { data, study, col } = await hostileCohort(dir);
  const out = path.join(dir, 'hostile-report.html');
  const r = pairsight(['report', data, '--study', study, '--out', out, '--include-notes', '--example-pairs', '4']);
  assert.equal(r.status, 0, r.stderr);
  const { page, log, dialogs, url } = await openReport(t, out);
  const text = await page.locator('body').textContent();
  assert.ok(text.includes(col), 'the column name as text');
  assert.ok(text.includes('ward=<i>east</i>'), 'the category label as text');
  assert.ok(await page.locator('#examples').isVisible());
  const examples = await page.locator('#examples').textContent();
  assert.ok(
    ['</script><script>alert(1)</script>', '"><img src=x onerror=alert(2)>', '<svg onload=alert(3)>', '</textarea><b>bold?</b>']
      .some((p) => examples.includes(p)),
    'a note payload as text',
  );
  const dom = await page.evaluate(() => ({
    imgs: document.querySelectorAll('img').length,
    scripts: document.scripts.length,
    bold: document.querySelectorAll('main b').length,
    italic: document.querySelectorAll('main i').length,
    textareas: document.querySelectorAll('textarea').length,
    // Every SVG is one of the charts, inside a figure.
    strays: [...document.querySelectorAll('svg')].filter((s) => !s.closest('figure')).length,
  }));
  assert.deepEqual(dom, { imgs: 0, scripts: 0, bold: 0, italic: 0, textareas: 0, strays: 0 });
  await screenshot(page, 'report-hostile');
  assert.deepEqual(dialogs, [], 'no dialog opened');
  assert.deepEqual(log.requests, [url]);
  assertQuiet(log);
});

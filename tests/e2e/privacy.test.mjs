// Privacy through a whole session on the demo: every step of the app, every
// export, a review round with its packets rated and merged and a report
// with the review. Every page the project ships (the app, a rating packet,
// the report) carries a Content-Security-Policy that forbids connections;
// the whole session requests nothing but the files themselves; and browser
// storage afterwards (local and session storage, IndexedDB, Cache Storage,
// cookies) holds settings and ratings, never a sentence of a note.

import { test } from 'node:test';
import assert from 'node:assert/strict';
import { readFile } from 'node:fs/promises';
import path from 'node:path';
import { pathToFileURL } from 'node:url';
import { ROOT, assertQuiet, csvRows, screenshot } from './support.mjs';
import { scratch } from './cli.mjs';
import { APP_URL, downloaded, idle, openDemo, step } from './flow.mjs';

/** The directives of a Content-Security-Policy (CSP Level 3, section 2.2). */
export function directives(policy) {
  const out = {};
  for (const part of policy.split(';')) {
    const [name, ...values] = part.trim().split(/\s+/);
    if (name && !(name.toLowerCase() in out)) out[name.toLowerCase()] = values;
  }
  return out;
}

/**
 * Check a page's policy forbids every connection: connect-src (or, when
 * absent, default-src, its fallback in CSP Level 3) is 'none', default-src
 * is 'none', no source anywhere names a scheme or host that reaches a
 * network, and forms and <base> cannot point elsewhere.
 */
function assertNoConnections(policy, name) {
  const d = directives(policy);
  assert.deepEqual(d['default-src'], ["'none'"], `${name}: default-src 'none' in ${policy}`);
  assert.deepEqual(d['connect-src'] ?? d['default-src'], ["'none'"], `${name}: connections forbidden`);
  assert.deepEqual(d['form-action'], ["'none'"], `${name}: form-action 'none'`);
  assert.deepEqual(d['base-uri'], ["'none'"], `${name}: base-uri 'none'`);
  for (const [k, values] of Object.entries(d)) {
    for (const v of values) {
      assert.doesNotMatch(v, /^(\*|https?:|wss?:|ftp:|'self'|filesystem:)|\./, `${name}: ${k} allows ${v}`);
    }
  }
  // Inline script would let injected markup run (and reach out); the report
  // has no script at all, the app and packet allow theirs by hash.
  for (const v of d['script-src'] ?? []) assert.doesNotMatch(v, /'unsafe-(inline|eval)'/, `${name}: script-src allows ${v}`);
}

/** The policy meta of the page open in `page`. */
async function policyOf(page) {
  const metas = await page.locator('meta[http-equiv="Content-Security-Policy"]').evaluateAll((ms) => ms.map((m) => m.content));
  assert.equal(metas.length, 1, 'one policy');
  return metas[0];
}

/** Everything the browser keeps for the page's origin, as text. */
async function storageDump(page) {
  const inPage = await page.evaluate(async () => {
    const all = (s) => {
      const out = {};
      for (let i = 0; i < s.length; i += 1) out[s.key(i)] = s.getItem(s.key(i));
      return out;
    };
    const idb = indexedDB.databases ? (await indexedDB.databases()).map((d) => d.name) : 'no database list';
    let cacheKeys;
    try {
      cacheKeys = typeof caches === 'undefined' ? [] : await caches.keys();
    } catch (err) {
      cacheKeys = [];
    }
    return { local: all(localStorage), session: all(sessionStorage), indexedDB: idb, caches: cacheKeys, cookie: document.cookie };
  });
  return { ...inPage, contextCookies: await page.context().cookies() };
}

/**
 * Distinctive sentences of the demo's notes: every sentence or line of at
 * least 30 characters that is not a concept term of the study file (those
 * are settings the analyst wrote and may be stored).
 */
async function noteSentences() {
  const rows = csvRows(await readFile(path.join(ROOT, 'demo/cohort.csv'), 'utf8'));
  const col = rows[0].indexOf('admission_note');
  assert.ok(col >= 0, 'the demo has a note column');
  const study = (await readFile(path.join(ROOT, 'demo/demo.study.toml'), 'utf8')).toLowerCase();
  const sentences = new Set();
  for (const row of rows.slice(1)) {
    for (const s of (row[col] ?? '').split(/[.\n;]/)) {
      const t = s.trim().toLowerCase();
      if (t.length >= 30 && !study.includes(t)) sentences.add(t);
    }
  }
  return [...sentences];
}

test('a whole session makes no request, every shipped page forbids connections, and storage holds no note text', { timeout: 600_000 }, async (t) => {
  const sentences = await noteSentences();
  assert.ok(sentences.length > 50, `${sentences.length} distinctive note sentences to look for`);
  const { context, page, log } = await openDemo(t);
  const dir = await scratch(t);
  const opened = []; // file URLs of the packet and report pages

  assertNoConnections(await policyOf(page), 'the app');

  // Every step, and every file it offers.
  for (const id of ['data', 'notes', 'designs', 'balance', 'pairs']) {
    await step(page, id);
    await idle(page);
    await screenshot(page, `privacy-${id}`);
  }
  await page.getByTestId('pair-note').first().waitFor();

  await step(page, 'review');
  await page.getByTestId('round-sets').fill('2');
  await page.getByTestId('round-reviewers').fill('rev-a, rev-b');
  await page.getByTestId('round-draw').click();
  await page.getByTestId('round-summary').waitFor({ timeout: 60_000 });
  await idle(page);
  const packets = {};
  for (const who of ['rev-a', 'rev-b']) {
    const got = await downloaded(page, page.locator(`[data-testid="download-packet"][data-reviewer="${who}"]`));
    packets[who] = path.join(dir, got.name);
    await got.download.saveAs(packets[who]);
  }
  await downloaded(page, 'download-key');

  // Two reviewers rate in their packets, in this browser (the same file://
  // origin as the app, so the storage read below sees both).
  const ratings = [];
  let packetPage = null;
  for (const [k, who] of ['rev-a', 'rev-b'].entries()) {
    const url = pathToFileURL(packets[who]).href;
    opened.push(url);
    packetPage = await context.newPage();
    packetPage.on('pageerror', (e) => log.pageErrors.push(String(e)));
    await packetPage.goto(url);
    await packetPage.locator('#app:not([hidden])').waitFor();
    assertNoConnections(await policyOf(packetPage), `packet ${who}`);
    const n = Number(await packetPage.locator('#progress').getAttribute('max'));
    for (let i = 0; i < n; i += 1) {
      await packetPage.keyboard.press(String(((i + k) % 5) + 1));
      if (i === 0) {
        // A comment, then the Next button: keys typed in the box are text.
        await packetPage.locator('#comment').fill(`${who}: a comment the reviewer typed`);
        await packetPage.locator('#next').click();
      } else await packetPage.keyboard.press('ArrowRight');
    }
    assert.equal(await packetPage.locator('#progress-text').textContent(), `${n} of ${n} rated`);
    const [download] = await Promise.all([packetPage.waitForEvent('download'), packetPage.locator('#export').click()]);
    const file = path.join(dir, `ratings-${who}.csv`);
    await download.saveAs(file);
    ratings.push(file);
    await screenshot(packetPage, `privacy-packet-${who}`);
    if (who === 'rev-a') await packetPage.close();
  }
  await page.bringToFront();
  await page.getByTestId('import-ratings').setInputFiles(ratings);
  await page.locator('[data-testid="merge-summary"], [data-testid="error-banner"]:not([hidden])').first().waitFor({ timeout: 60_000 });
  await idle(page);
  assert.equal(await page.getByTestId('error-banner').isHidden(), true, await page.getByTestId('error-banner').innerText());
  assert.ok(await page.getByTestId('merge-clean').isVisible(), await page.getByTestId('review-results').innerText());
  assert.match(await page.getByTestId('merge-summary').textContent(), /^[1-9]\d* ratings accepted from 2 files/);
  await page.getByTestId('agreement-table').waitFor();
  await screenshot(page, 'privacy-review');

  await step(page, 'effect');
  await page.getByTestId('outcome').first().waitFor({ timeout: 60_000 });
  await page.waitForFunction(() => document.querySelector('[data-testid="sensitivity-plot"]')?.dataset.drawn === 'true', null, { timeout: 60_000 });
  await downloaded(page, page.getByTestId('export-sensitivity-svg').first());

  await step(page, 'export');
  for (const id of ['export-matched', 'export-balance', 'export-score', 'export-effect', 'export-love-svg', 'export-love-png', 'export-study']) {
    await downloaded(page, id);
  }
  const report = await downloaded(page, 'export-report');
  const reportFile = path.join(dir, report.name);
  await report.download.saveAs(reportFile);
  assert.match(report.bytes.toString('utf8'), /id="review"/, 'the report carries the review');
  assert.equal(await page.getByTestId('error-banner').isHidden(), true, await page.getByTestId('error-banner').innerText());

  // The report, opened from disk like a collaborator would.
  const reportUrl = pathToFileURL(reportFile).href;
  opened.push(reportUrl);
  const viewer = await context.newPage();
  await viewer.goto(reportUrl);
  assertNoConnections(await policyOf(viewer), 'the report');
  assert.equal(await viewer.locator('#review').count(), 1);
  await viewer.close();

  // Requests: the app's own file, the worker's blob: URL made in memory,
  // and the pages opened from disk; nothing else, and nothing on a network.
  const elsewhere = log.requests.filter((url) => !url.startsWith('blob:') && url.split('#')[0] !== APP_URL && !opened.includes(url));
  assert.deepEqual(elsewhere, [], 'requests besides the files themselves');
  assert.ok(log.requests.every((url) => /^(file|blob):/.test(url)), 'no network scheme at all');
  assert.deepEqual(await page.evaluate(() => performance.getEntriesByType('resource').map((e) => e.name)), [], 'resource timing of the app');

  // The sentences looked for are note text as it travels: the packets
  // (which must carry notes) hold some of them, so a stored note would show.
  const packetText = (await readFile(packets['rev-a'], 'utf8')).toLowerCase();
  assert.ok(sentences.some((s) => packetText.includes(s)), 'the packet holds note sentences the storage check looks for');

  // Storage, read from the app and from a packet.
  const dumps = { app: await storageDump(page), packet: await storageDump(packetPage) };
  t.diagnostic(`storage keys: ${Object.keys(dumps.app.local).join(', ')}`);
  for (const [where, dump] of Object.entries(dumps)) {
    const text = JSON.stringify(dump).toLowerCase();
    const leaked = sentences.filter((s) => text.includes(s));
    assert.deepEqual(leaked, [], `${where}: note text in browser storage`);
    assert.deepEqual(dump.session, {}, `${where}: session storage`);
    assert.deepEqual(dump.indexedDB, [], `${where}: IndexedDB databases`);
    assert.deepEqual(dump.caches, [], `${where}: Cache Storage`);
    assert.equal(dump.cookie, '', `${where}: cookies`);
    assert.deepEqual(dump.contextCookies, [], `${where}: cookies of the browser`);
    // What storage is for: the study's settings, the step, the ratings.
    const keys = Object.keys(dump.local);
    assert.ok(keys.some((k) => k.startsWith('pairsight:study:')), `${where}: the study's settings are kept: ${keys}`);
    assert.ok(keys.some((k) => k.startsWith('pairsight-packet:') && k.endsWith(':rev-b')), `${where}: the ratings are kept: ${keys}`);
  }
  const kept = JSON.parse(Object.entries(dumps.packet.local).find(([k]) => k.endsWith(':rev-b'))[1]);
  assert.ok(Object.keys(kept.ratings).length > 0, 'ratings in the packet storage');
  await packetPage.close();
  assertQuiet(log);
});

test('the policy reader finds each directive once, the first one counting', () => {
  // CSP Level 3 (W3C), 2.2.1: a repeated directive is ignored.
  assert.deepEqual(directives("default-src 'none'; img-src data: blob:;connect-src 'none'; img-src *"), {
    'default-src': ["'none'"],
    'img-src': ['data:', 'blob:'],
    'connect-src': ["'none'"],
  });
  assert.throws(() => assertNoConnections("default-src 'none'; connect-src 'self'; form-action 'none'; base-uri 'none'", 'x'), /connections forbidden/);
  assert.throws(() => assertNoConnections("default-src 'none'; img-src https://example.invalid; form-action 'none'; base-uri 'none'", 'x'), /img-src allows/);
});

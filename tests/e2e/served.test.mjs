// The served variant (`cargo xtask demo` / `serve`): separate files from the
// project's own static server on 127.0.0.1, and the engine's protocol seen
// directly through its module.

import { test } from 'node:test';
import assert from 'node:assert/strict';
import { assertQuiet, fixture, openApp, pickFile, startServer, workspaceVersion } from './support.mjs';

test('served dist/ works and loads only from its own origin', async (t) => {
  const base = await startServer(t);
  const { page, log, version } = await openApp(t, base);
  assert.equal(version, await workspaceVersion());
  await pickFile(page, fixture('cohort_small.csv'));
  assert.equal(await page.getByTestId('summary-shape').textContent(), '12 rows × 12 columns');
  const foreign = log.requests.filter((url) => !url.startsWith(base));
  assert.deepEqual(foreign, [], 'requests to anywhere but the local server');
  const files = new Set(log.requests.map((url) => new URL(url).pathname));
  for (const f of ['/', '/main.js', '/worker.js', '/pairsight_wasm.js', '/pairsight_wasm_bg.wasm']) {
    assert.ok(files.has(f), `${f} was loaded`);
  }
  assertQuiet(log);
});

test('engine: errors keep their shape, cancel rejects and a fresh worker carries on', async (t) => {
  const base = await startServer(t);
  const { page, log } = await openApp(t, base);
  const outcome = await page.evaluate(async () => {
    const { startEngine, locateCore } = await import('./engine.js');
    const engine = startEngine(locateCore(document));
    const info = await engine.ready();
    const bytes = (text) => new TextEncoder().encode(text).buffer;
    const error = await engine.call('summarize_csv', { bytes: bytes('a,b\n1,2\n3\n') }).catch((e) => e);
    const controller = new AbortController();
    const doomed = engine.call('summarize_csv', { bytes: bytes('a\n1\n') }, { signal: controller.signal });
    controller.abort();
    const cancelled = await doomed.catch((e) => e);
    await engine.ready();
    const after = await engine.call('summarize_csv', { bytes: bytes('a,b\n1,x\n') });
    const unknown = await engine.call('no_such_method').catch((e) => e);
    return { info, error, cancelled, rows: after.rows, unknown: unknown.kind };
  });
  for (const m of ['version', 'missing_markers', 'summarize_csv', 'session_open', 'session_prepare', 'session_run', 'session_pair', 'session_files', 'session_draw_love', 'session_draw_overlap', 'study_to_toml', 'study_from_toml']) {
    assert.ok(outcome.info.methods.includes(m), `the worker offers ${m}`);
  }
  assert.deepEqual(Object.keys(outcome.error).sort(), ['column', 'detail', 'key', 'kind', 'message', 'row']);
  assert.equal(outcome.error.kind, 'data');
  assert.equal(outcome.error.row, 3);
  assert.equal(outcome.error.column, null);
  assert.equal(outcome.cancelled.kind, 'cancelled');
  assert.equal(outcome.rows, 1);
  assert.equal(outcome.unknown, 'internal');
  assertQuiet(log);
});

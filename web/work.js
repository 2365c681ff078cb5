// Work in the engine, one job at a time, with the progress strip (stage
// name, a bar, a Cancel button). The engine's worker keeps a session (the
// file, the prepared study, the runs); cancelling ends that worker, so this
// module remembers what the session should hold and sends it again when a
// fresh worker needs it. The file itself is held as a Blob (for a picked
// file, a reference to it on disk), so neither the page nor the worker keeps
// a copy of its bytes: the worker reads it into the core chunk by chunk.

import { byTestId, el, replaceChildren } from './dom.js';
import { store, studyForCore, changed } from './store.js';

let engine = null;
let source = null; // the open file as a Blob, to re-open it in a fresh worker
let engineFile = false; // whether the worker's session has the file
let engineStudy = null; // JSON of the study the worker's session has prepared
let pageStudy = null; // JSON of the study the runs in `store.runs` were made with
let queue = Promise.resolve();
let controller = null;

/** Connect to the engine and draw the progress strip. */
export function mountWork(theEngine) {
  engine = theEngine;
  // A worker that died while idle took its session with it.
  engine.onRestart?.(() => {
    engineFile = false;
    engineStudy = null;
  });
  const strip = byTestId('progress');
  const label = el('span', { class: 'progress-label', 'data-testid': 'progress-label' });
  const bar = el('progress', { class: 'progress-bar', max: '1', value: '0', 'aria-label': 'Progress of the work' });
  const cancel = el('button', { type: 'button', class: 'button button-quiet', 'data-testid': 'cancel', text: 'Cancel' });
  cancel.addEventListener('click', () => controller?.abort());
  replaceChildren(strip, label, bar, cancel);
}

function show(text, fraction) {
  const strip = byTestId('progress');
  strip.hidden = false;
  strip.querySelector('.progress-label').textContent = text;
  const bar = strip.querySelector('progress');
  if (fraction === null) bar.removeAttribute('value');
  else bar.value = fraction;
}

function hide() {
  byTestId('progress').hidden = true;
}

/**
 * Run `job(step)` after the jobs before it, showing progress. `step(label,
 * method, args, index, total)` calls the engine; the strip shows the
 * engine's own stage names as they arrive.
 */
export function job(title, body) {
  const next = queue.then(async () => {
    controller = new AbortController();
    const signal = controller.signal;
    const started = performance.now();
    const step = (method, args, index = 0, total = 1) =>
      engine.call(method, args, {
        signal,
        onProgress: (msg) => show(`${title}: ${msg.label}…`, (index + (msg.done / Math.max(1, msg.total))) / total),
      });
    show(`${title}…`, null);
    try {
      return await body(step);
    } catch (err) {
      if (err?.kind === 'cancelled' || err?.kind === 'internal') {
        // The worker was replaced: its session is gone.
        engineFile = false;
        engineStudy = null;
      }
      throw err;
    } finally {
      controller = null;
      store.lastJobMs = performance.now() - started;
      hide();
    }
  });
  queue = next.catch(() => {});
  return next;
}

async function ensureFile(step) {
  if (engineFile) return;
  if (!source) throw { kind: 'param', message: 'Open a cohort file first.', detail: 'Open a cohort file first.' };
  await step('session_open', { file: source });
  engineFile = true;
  engineStudy = null;
}

async function ensureStudy(step) {
  await ensureFile(step);
  const wanted = JSON.stringify(studyForCore());
  if (engineStudy === wanted && store.prepared) return store.prepared;
  const prepared = await step('session_prepare', { study: studyForCore() });
  engineStudy = wanted;
  store.prepared = prepared;
  // Runs the engine no longer holds are out of date, unless only the worker
  // is new (a cancel or a crash) and the study is the same: then they are
  // still right, and `withSession` re-runs them in the fresh worker on demand.
  if (pageStudy !== wanted) {
    const kept = new Set(prepared.cached_runs);
    for (const name of [...store.runs.keys()]) if (!kept.has(name)) store.runs.delete(name);
  }
  pageStudy = wanted;
  return prepared;
}

/**
 * Open a cohort file (a File or any Blob) in a fresh session; resolves with
 * its summary.
 */
export function openCohort(name, file) {
  return job(`Reading “${name}”`, async (step) => {
    source = null;
    engineFile = false;
    engineStudy = null;
    const summary = await step('session_open', { file });
    source = file;
    engineFile = true;
    store.prepared = null;
    store.runs.clear();
    return summary;
  });
}

/** Prepare the current study (note features); resolves with the answer. */
export function prepare() {
  return job('Preparing the study', async (step) => {
    const p = await ensureStudy(step);
    changed('prepared');
    return p;
  });
}

/** Run the named designs; runs land in `store.runs`. */
export function runDesigns(names) {
  return job(names.length === 1 ? `Running ${names[0]}` : `Running ${names.length} designs`, async (step) => {
    await ensureStudy(step);
    for (const [i, name] of names.entries()) {
      const t0 = performance.now();
      const run = await step('session_run', { name }, i, names.length);
      run.ms = performance.now() - t0;
      store.runs.set(name, run);
    }
    changed('runs');
    return names.map((n) => store.runs.get(n));
  });
}

/**
 * A call that needs the prepared session (charts, pairs, exports): it
 * re-creates the session first if a cancel replaced the worker, re-running
 * designs that were shown before.
 */
export function withSession(title, method, args, options = {}) {
  return job(title, async (step) => {
    await ensureStudy(step);
    for (const name of options.needs ?? []) {
      if (!store.runs.has(name)) throw { kind: 'param', message: `Run design “${name}” first.`, detail: `Run design “${name}” first.` };
    }
    try {
      return await step(method, args);
    } catch (err) {
      if (!/has not been run yet/.test(err?.message ?? '')) throw err;
      for (const name of options.needs ?? []) await step('session_run', { name });
      return step(method, args);
    }
  });
}

/** A call that needs no session (study file text, versions). */
export function plain(method, args) {
  return engine.call(method, args);
}

/** Whether a cohort is open. */
export function hasFile() {
  return source !== null;
}

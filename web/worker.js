// The engine room: every call into the wasm core runs here, off the page's
// main thread. A classic worker script. In the single file it comes right
// after wasm-bindgen's glue in one blob, so `wasm_bindgen` already exists;
// served, it loads the glue from its own origin. The protocol is described
// in engine.js.

if (typeof wasm_bindgen === 'undefined') importScripts('pairsight_wasm.js');

const core = wasm_bindgen;

// Each method is named after the binding it calls. The ready message lists
// those this build of the core has, so the page can offer what exists and
// nothing else (`demo_cohort` arrives with the demo generator). A method may
// return `withTransfer(value, list)` to hand buffers over rather than copy.
const METHODS = {
  version: () => core.version(),
  missing_markers: () => core.missing_markers(),
  summarize_csv: ({ bytes }) => core.summarize_csv(new Uint8Array(bytes)),
  demo_cohort: () => core.demo_cohort(),
  demo_study: () => core.demo_study(),
  session_open: ({ file }, progress) => openInChunks(file, progress),
  engine_memory: () => core.engine_memory(),
  session_levels: ({ column, limit }) => core.session_levels(column, limit ?? 50),
  session_prepare: ({ study }, progress) => {
    progress(0, 1, 'note features');
    return core.session_prepare(study);
  },
  session_run: ({ name }, progress) => {
    progress(0, 1, `score model, matching, balance, effect: ${name}`);
    return core.session_run(name);
  },
  session_pair: ({ name, set }) => core.session_pair(name, set),
  session_disagreement: ({ name, column }) => core.session_disagreement(name, column),
  session_preview: ({ offset, count, mentionsOnly }) => core.session_preview(offset, count, mentionsOnly),
  session_files: ({ name }) => core.session_files(name),
  session_draw_love: ({ width, height, designs }) =>
    paint(width, height, (canvas) => core.session_draw_love(canvas, designs)),
  session_draw_overlap: ({ width, height, name }) =>
    paint(width, height, (canvas) => core.session_draw_overlap(canvas, name)),
  session_love_svg: ({ designs, width, height }) => core.session_love_svg(designs, width, height),
  session_overlap_svg: ({ name, width, height }) => core.session_overlap_svg(name, width, height),
  love_height: ({ terms }) => core.love_height(terms),
  effect_caution: () => core.effect_caution(),
  session_draw_sensitivity: ({ width, height, name, outcome }) =>
    paint(width, height, (canvas) => core.session_draw_sensitivity(canvas, name, outcome)),
  session_sensitivity_svg: ({ name, outcome, width, height }) => core.session_sensitivity_svg(name, outcome, width, height),
  session_report: ({ request }, progress) => {
    progress(0, 1, 'writing the report');
    return core.session_report(request);
  },
  session_round: ({ request }, progress) => {
    progress(0, 1, 'drawing the round, writing the packets');
    return core.session_round(request);
  },
  packet_defaults: () => core.packet_defaults(),
  review_merge: ({ upload }, progress) => {
    progress(0, 1, 'merging ratings, agreement');
    return core.review_merge(upload);
  },
  study_to_toml: ({ study }) => core.study_to_toml(study),
  study_from_toml: ({ text }) => core.study_from_toml(text),
};

// A cohort file arrives as a Blob (a File picked or dropped, or the demo's
// bytes): handing a Blob to a worker passes a reference, not a copy, so
// neither the page nor this worker ever holds the whole file. It goes into
// the core's memory a chunk at a time, with progress, and is read there.
// Weighting: copying is quick next to reading, a tenth of the bar.
const CHUNK = 8 << 20;
const COPY_SHARE = 0.1;

async function openInChunks(file, progress) {
  const size = file.size;
  const mb = (n) => `${(n / 1e6).toFixed(0)} of ${(size / 1e6).toFixed(0)} MB`;
  core.session_begin(size);
  for (let at = 0; at < size; at += CHUNK) {
    progress(COPY_SHARE * (at / Math.max(1, size)), 1, `loading ${mb(at)}`);
    let chunk;
    try {
      chunk = await file.slice(at, Math.min(size, at + CHUNK)).arrayBuffer();
    } catch (err) {
      // Moved, deleted or changed on disk since it was picked.
      const message = `The browser could not read the file (${err?.message ?? err}); pick it again.`;
      throw { kind: 'data', message, detail: message, row: null, column: null, key: null };
    }
    core.session_push(new Uint8Array(chunk));
  }
  progress(COPY_SHARE, 1, 'reading rows');
  return core.session_finish((done, total) =>
    progress(COPY_SHARE + (1 - COPY_SHARE) * (done / Math.max(1, total)), 1, `reading rows, ${Math.floor((100 * done) / Math.max(1, total))}%`),
  );
}

// A chart is painted by the core on a canvas of the worker's own; the page
// receives the picture as an ImageBitmap (handed over, not copied) and shows
// it in its <canvas>, so drawing costs the page's main thread nothing.
function paint(width, height, draw) {
  const canvas = new OffscreenCanvas(width, height);
  draw(canvas);
  const bitmap = canvas.transferToImageBitmap();
  return withTransfer({ bitmap, width, height }, [bitmap]);
}

// Methods made of several bindings, by the binding they cannot do without.
const NEEDS = { session_open: 'session_finish' };
const available = (name) => typeof core[NEEDS[name] ?? name] === 'function';

const TRANSFER = Symbol('transfer');
function withTransfer(value, list) {
  return { [TRANSFER]: list, value };
}

// After a trap (a Rust panic) the instance's memory cannot be trusted; every
// later call is refused and the page starts a fresh worker.
let broken = false;

self.addEventListener('message', (event) => {
  const msg = event.data;
  if (msg.type === 'init') init(msg.wasm, msg.lock);
  else if (msg.type === 'call') call(msg);
});

async function init(wasm, lock) {
  try {
    // Held until this worker ends, however it ends: the page's engine
    // learns of a silent death when the lock is freed (engine.js).
    if (lock && self.navigator?.locks) {
      await new Promise((held) => {
        navigator.locks.request(lock, () => {
          held();
          return new Promise(() => {});
        }).catch(held);
      });
    }
    const bytes = typeof wasm === 'string' ? fromBase64(wasm) : wasm;
    await core({ module_or_path: bytes });
    const methods = Object.keys(METHODS).filter(available);
    self.postMessage({ type: 'ready', version: core.version(), methods });
  } catch (err) {
    self.postMessage({ type: 'failed', error: toErrorShape(err, 'The engine could not start') });
  }
}

async function call({ id, method, args }) {
  if (broken) {
    self.postMessage({ type: 'error', id, fatal: true, error: internal('The engine must restart after an internal error.') });
    return;
  }
  const run = Object.hasOwn(METHODS, method) && available(method) ? METHODS[method] : null;
  if (!run) {
    self.postMessage({ type: 'error', id, fatal: false, error: internal(`This build has no engine method "${method}".`) });
    return;
  }
  const progress = (done, total, label) => self.postMessage({ type: 'progress', id, done, total, label });
  try {
    const out = await run(args ?? {}, progress);
    if (out && typeof out === 'object' && TRANSFER in out) {
      self.postMessage({ type: 'result', id, value: out.value }, out[TRANSFER]);
    } else {
      self.postMessage({ type: 'result', id, value: out });
    }
  } catch (err) {
    const fatal = err instanceof WebAssembly.RuntimeError;
    if (fatal) broken = true;
    self.postMessage({ type: 'error', id, fatal, error: toErrorShape(err, 'Internal error in the engine') });
  }
}

function internal(message) {
  return { kind: 'internal', message, detail: message, row: null, column: null, key: null };
}

// The core throws the error shape already; anything else is a fault of the
// engine and is described as one.
function toErrorShape(err, prefix) {
  if (err && typeof err === 'object' && typeof err.kind === 'string' && typeof err.message === 'string') {
    return {
      kind: err.kind,
      message: err.message,
      detail: err.detail ?? err.message,
      row: err.row ?? null,
      column: err.column ?? null,
      key: err.key ?? null,
    };
  }
  return internal(`${prefix}: ${err?.message ?? String(err)}`);
}

function fromBase64(text) {
  const binary = atob(text);
  const bytes = new Uint8Array(binary.length);
  for (let i = 0; i < binary.length; i += 1) bytes[i] = binary.charCodeAt(i);
  return bytes;
}

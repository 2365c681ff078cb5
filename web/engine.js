// The page's side of the engine: one Web Worker owns the wasm core, so no
// computation ever runs on the main thread and the page stays responsive.
//
// Protocol (plain objects, structured-cloned by postMessage):
//   page -> worker  {type: 'init', wasm, lock}      wasm: ArrayBuffer, or base64 text;
//                                                   lock: a Web Lock name to hold for life, or null
//                   {type: 'call', id, method, args}
//   worker -> page  {type: 'ready', version, methods}
//                   {type: 'failed', error}          the core could not start
//                   {type: 'progress', id, done, total, label}
//                   {type: 'result', id, value}
//                   {type: 'error', id, error, fatal}
// Every error is one shape: {kind, message, detail, row, column, key}, with
// kind 'data' | 'study' | 'param' | 'compute' from the core, 'internal' for a
// fault of the engine itself, 'cancelled' for a call the page called off.
// A synchronous wasm call cannot be interrupted, so cancelling ends the worker
// and starts a fresh one; the calls in flight reject with kind 'cancelled'.
//
// A worker can also die without a word (it closed itself, or the browser
// ended it): no message and no error event reach the page, and every call
// would wait for ever. So the init message names a Web Lock that the worker
// takes and holds for its whole life; the page queues for the same lock once
// the worker is ready, and is granted it exactly when the worker is gone,
// busy or not. Then the engine starts a fresh worker, the calls in flight
// reject with kind 'internal', and `onRestart` listeners hear of it (the
// worker's session is gone with it).

/** Ids of the single file's data elements (written by `cargo xtask build`). */
const WORKER_SOURCE_ID = 'pairsight-worker';
const WASM_SOURCE_ID = 'pairsight-wasm';

/** An error of the engine's own making, in the shape the core's errors have. */
export function engineError(kind, message) {
  return { kind, message, detail: message, row: null, column: null, key: null };
}

/**
 * Where this page's core comes from. The single file carries the worker's
 * source and the wasm (base64) in two inert data elements, since a page
 * opened from disk can load neither a worker script nor a wasm file; the
 * served page loads `worker.js` and fetches its wasm from its own origin.
 */
export function locateCore(doc) {
  const workerSource = doc.getElementById(WORKER_SOURCE_ID);
  const wasmSource = doc.getElementById(WASM_SOURCE_ID);
  if (workerSource && wasmSource) {
    const blob = new Blob([workerSource.textContent], { type: 'text/javascript' });
    return {
      workerUrl: URL.createObjectURL(blob),
      wasm: Promise.resolve(wasmSource.textContent.trim()),
    };
  }
  const wasm = fetch('pairsight_wasm_bg.wasm').then((response) => {
    if (!response.ok) throw new Error(`pairsight_wasm_bg.wasm: HTTP ${response.status}`);
    return response.arrayBuffer();
  });
  return { workerUrl: 'worker.js', wasm };
}

/** Start the engine from `locateCore`'s answer. */
export function startEngine(source) {
  const pending = new Map();
  let nextId = 1;
  let worker = null;
  let info = null;
  let readyPromise = null;
  let settleReady = null;
  let generation = 0;
  const restartListeners = new Set();
  // Lock names are per origin, shared by every tab of it: make ours unique.
  const lockPrefix = `pairsight-engine-${Date.now().toString(36)}-${Math.random().toString(36).slice(2)}-`;

  function spawn() {
    info = null;
    generation += 1;
    const lock = navigator.locks ? `${lockPrefix}${generation}` : null;
    readyPromise = new Promise((resolve, reject) => {
      settleReady = { resolve, reject };
    });
    // Nobody may be waiting yet; an unobserved failure must not become an
    // unhandled rejection (the page reports it through `ready()`).
    readyPromise.catch(() => {});
    const mine = generation;
    worker = new Worker(source.workerUrl);
    worker.addEventListener('message', (event) => {
      if (event.data?.type === 'ready' && lock) watch(lock, mine);
      onMessage(event);
    });
    worker.addEventListener('error', (event) => {
      event.preventDefault();
      const message = event.message || 'the engine script could not be loaded';
      const error = engineError('internal', `The engine stopped: ${message}`);
      // Before it is ready the worker cannot start at all: restarting would
      // only fail again. After that, its state is suspect: start afresh.
      if (info && mine === generation) restart(error);
      else if (mine === generation) fail(error);
    });
    source.wasm.then(
      (wasm) => worker.postMessage({ type: 'init', wasm, lock }),
      (err) => fail(engineError('internal', `The engine could not load its code: ${err.message ?? err}`)),
    );
  }

  // Granted only once worker `mine` no longer holds the lock, i.e. is dead.
  function watch(lock, mine) {
    navigator.locks
      .request(lock, () => {
        if (mine === generation) restart(engineError('internal', 'The engine stopped unexpectedly and was restarted; try again.'));
      })
      .catch(() => {});
  }

  function fail(error) {
    settleReady.reject(error);
    for (const job of pending.values()) job.reject(error);
    pending.clear();
  }

  function restart(error) {
    worker.terminate();
    for (const job of pending.values()) job.reject(error);
    pending.clear();
    spawn();
    for (const fn of [...restartListeners]) fn(error);
  }

  function onMessage(event) {
    const msg = event.data;
    switch (msg.type) {
      case 'ready':
        info = { version: msg.version, methods: msg.methods };
        settleReady.resolve(info);
        break;
      case 'failed':
        fail(msg.error);
        break;
      case 'progress':
        pending.get(msg.id)?.onProgress?.(msg);
        break;
      case 'result':
      case 'error': {
        const job = pending.get(msg.id);
        pending.delete(msg.id);
        if (msg.type === 'result') job?.resolve(msg.value);
        else job?.reject(msg.error);
        if (msg.fatal) {
          restart(engineError('internal', 'The engine restarted after an internal error; try again.'));
        }
        break;
      }
      default:
        break;
    }
  }

  /**
   * Call a method of the worker. Options: `onProgress(message)`, `signal`
   * (an AbortSignal that cancels), `transfer` (buffers to hand over rather
   * than copy). Resolves with the result, rejects with the error shape.
   */
  function call(method, args = {}, options = {}) {
    const { onProgress, signal, transfer = [] } = options;
    return new Promise((resolve, reject) => {
      if (signal?.aborted) {
        reject(engineError('cancelled', 'Cancelled.'));
        return;
      }
      const id = nextId++;
      pending.set(id, { resolve, reject, onProgress });
      signal?.addEventListener(
        'abort',
        () => {
          if (pending.has(id)) restart(engineError('cancelled', 'Cancelled.'));
        },
        { once: true },
      );
      readyPromise.then(
        () => {
          if (pending.has(id)) worker.postMessage({ type: 'call', id, method, args }, transfer);
        },
        (error) => {
          if (pending.delete(id)) reject(error);
        },
      );
    });
  }

  spawn();
  return {
    /** Resolves with {version, methods} once the core runs. */
    ready: () => readyPromise,
    /** Whether this build's core has `method` (known once ready). */
    has: (method) => Boolean(info?.methods.includes(method)),
    call,
    /** Call `fn(error)` whenever a fresh worker replaced the old one; returns an unsubscribe function. */
    onRestart(fn) {
      restartListeners.add(fn);
      return () => restartListeners.delete(fn);
    },
  };
}

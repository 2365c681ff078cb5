// The page's one store: the open cohort's summary, the study being edited
// (a plain object with the fields of a study file), what the engine
// prepared, and each design's latest run. Screens read it and subscribe to
// changes; only this module writes browser storage.
//
// Stored (localStorage, per set of column names): the study and the current
// step. Never stored: the file, its notes or any other cell value.

const STORAGE_PREFIX = 'pairsight:study:';
const STEP_KEY = 'pairsight:step';

export const store = {
  /** {name, summary} of the open cohort, or null. */
  file: null,
  /** The study object (columns, concepts, note_options, designs), or null. */
  study: null,
  /** The engine's answer to the last prepare, or null when stale. */
  prepared: null,
  /** Design name -> run view of the engine. */
  runs: new Map(),
  /** Design names shown together on the Balance step. */
  compare: [],
};

const listeners = new Set();

/** Call `fn(reason)` after every change; returns an unsubscribe function. */
export function subscribe(fn) {
  listeners.add(fn);
  return () => listeners.delete(fn);
}

/** Tell every screen that the store changed (`reason` says what). */
export function changed(reason) {
  for (const fn of [...listeners]) fn(reason);
}

/** The key under which a cohort's study is kept: its column names. */
function storageKey(summary) {
  return STORAGE_PREFIX + summary.column_summaries.map((c) => c.name).join('\u001f');
}

/** The study saved for a cohort with these columns, or null. */
export function loadStudy(summary) {
  try {
    const text = localStorage.getItem(storageKey(summary));
    return text ? JSON.parse(text) : null;
  } catch {
    return null;
  }
}

/** Keep the current study for the next visit (settings only, no data). */
export function saveStudy() {
  if (!store.file || !store.study) return;
  try {
    localStorage.setItem(storageKey(store.file.summary), JSON.stringify(store.study));
  } catch {
    // Storage full or switched off: the session still works, it just will
    // not survive a reload.
  }
}

/** The step the user was on last time. */
export function loadStep() {
  try {
    return localStorage.getItem(STEP_KEY);
  } catch {
    return null;
  }
}

/** Remember the current step. */
export function saveStep(step) {
  try {
    localStorage.setItem(STEP_KEY, step);
  } catch {
    // As above: not fatal.
  }
}

/** A deep copy of a plain value. */
export function clone(value) {
  return structuredClone(value);
}

/** Design names in the study's order. */
export function designNames() {
  return (store.study?.designs ?? []).map((d) => d.name);
}

/** A study with the columns' first guess: id, group and notes by kind. */
export function guessStudy(summary) {
  const cols = summary.column_summaries;
  const id =
    cols.find((c) => /(^|_)id$/i.test(c.name) && c.distinct === summary.rows) ??
    cols.find((c) => c.distinct === summary.rows && c.kind !== 'text');
  const group = cols.find((c) => c.kind === 'binary');
  // Notes: a text column other than the id, by its name when one says so.
  const texts = cols.filter((c) => c.kind === 'text' && c !== id);
  const notes = texts.find((c) => /note|text|narrative|comment/i.test(c.name)) ?? texts[0];
  return {
    columns: {
      id: id?.name ?? cols[0]?.name ?? '',
      group: group?.name ?? '',
      treated: '1',
      outcomes: [],
      covariates: [],
      notes: notes?.name ?? null,
      kinds: {},
    },
    concepts: [],
    note_options: { single_char_tokens: false, stop_words: false, stem: false, bigrams: false, latent_dims: 10, seed: 1 },
    designs: [],
  };
}

/** Fill the fields a study file may leave out, so editors see every one. */
export function normalizeStudy(study) {
  const s = clone(study);
  s.columns.outcomes ??= [];
  s.columns.covariates ??= [];
  s.columns.notes ??= null;
  s.columns.kinds ??= {};
  s.concepts ??= [];
  s.note_options = {
    single_char_tokens: false,
    stop_words: false,
    stem: false,
    bigrams: false,
    latent_dims: 10,
    seed: 1,
    ...(s.note_options ?? {}),
  };
  s.designs = (s.designs ?? []).map(normalizeDesign);
  return s;
}

/** A design with every setting present (defaults of the study file). */
export function normalizeDesign(d) {
  return {
    name: d.name,
    score_terms: d.score_terms ?? [],
    distance: d.distance ?? 'score',
    caliper: d.caliper ?? null,
    exact: d.exact ?? [],
    controls: d.controls ?? 1,
    reuse: d.reuse ?? false,
    algorithm: d.algorithm ?? 'optimal',
    mahalanobis_terms: d.mahalanobis_terms ?? [],
    note_vectors: d.note_vectors ?? 'tfidf',
    blend: d.blend ?? null,
  };
}

/** The study as the core reads it: absent optional values left out. */
export function studyForCore(study = store.study) {
  const s = clone(study);
  if (!s.columns.notes) delete s.columns.notes;
  for (const d of s.designs) {
    if (d.caliper === null || d.caliper === undefined || d.caliper === '') delete d.caliper;
    if (!d.blend) delete d.blend;
  }
  return s;
}

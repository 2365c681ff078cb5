// The Review step: draw a blinded review round across designs and save one
// rating packet per reviewer and the round's key; then bring the ratings
// files back with the key and read the merge problems, the agreement
// between reviewers and the design comparison. The key and the ratings stay
// in this page's memory (never in browser storage): the key unblinds the
// round and names the patients behind each pair.
//
// What must not be lost, and how it is kept:
// - A worker crash loses nothing: the key and the ratings files live here,
//   not in the worker, and a merge that failed because the engine restarted
//   is tried once more on the fresh worker.
// - Closing or reloading the page would lose a key drawn here that was not
//   saved yet (the packets are useless without it), and a merge whose
//   results were not saved (as a results file, or in a report). While either
//   holds, the page asks before it closes, and the screen says what is
//   unsaved. Storing the key in the browser instead would leave patient
//   identifiers on the machine; we do not.

import { el, replaceChildren } from '../dom.js';
import { showError, clearError, showNotice } from '../banner.js';
import { store } from '../store.js';
import { withSession, plain } from '../work.js';
import { saveFile as download } from '../saving.js';
import { fixed, interval, pText } from './effect.js';

/** The round and ratings of this visit, shared with the report export. */
export const review = {
  /** Text of the key file (made here or imported), or null. */
  keyJson: null,
  /** Where the key came from, for the screen. */
  keyName: null,
  /** The round made here: {round_id, pairs, drawn, packets}, or null. */
  made: null,
  /** Ratings files: [{name, bytes: number[]}]. */
  files: [],
  /** The engine's last merge ({issues, results, ...}), or null. */
  merged: null,
  /** Settings of the comparison. */
  level: 4,
  confidence: 0.95,
  /** Whether the key of the round made here was saved. */
  keySaved: false,
  /** What the shown results were merged from, and what the last saved results were. */
  mergedFrom: null,
  savedFrom: null,
};

/** The inputs of a merge, in one string: the same inputs give the same results. */
function mergeInputs() {
  const files = review.files.map((f) => `${f.name}:${f.bytes.length}`).join('/');
  return `${review.keyName}|${review.keyJson?.length}|${files}|${review.level}|${review.confidence}`;
}

/** What closing the page now would lose, in words; empty when nothing. */
export function unsavedReview() {
  const lost = [];
  if (review.made && review.keyJson && !review.keySaved) lost.push(`the key of round ${review.made.round_id}`);
  if (review.merged?.results && review.savedFrom !== review.mergedFrom) lost.push('the merged ratings’ results');
  return lost;
}

/** Record that the current merge's results were saved (results file or report). */
export function reviewExported() {
  review.savedFrom = review.mergedFrom;
  document.querySelector('[data-testid="review-unsaved"]')?.dispatchEvent(new Event('review-saved'));
}

// The browser shows its own generic question; the screen's line says what.
window.addEventListener('beforeunload', (event) => {
  if (!unsavedReview().length) return undefined;
  event.preventDefault();
  event.returnValue = '';
  return '';
});

/** Ask before replacing a key drawn here that was never saved. */
function mayDropKey() {
  if (!review.made || review.keySaved) return true;
  return window.confirm(`The key of round ${review.made.round_id} was not saved. Without it, that round’s ratings cannot be unblinded. Replace it anyway?`);
}

/** What the report needs to add the expert review, or null. */
export function reviewUpload() {
  if (!review.keyJson || !review.files.length || !review.merged?.results) return null;
  return { key_json: review.keyJson, files: review.files, params: params() };
}

function params() {
  return { comparison: { confidence: review.confidence, level: review.level }, alpha_bootstrap: 1000, seed: 1 };
}

function ranDesigns() {
  return (store.study?.designs ?? []).map((d) => d.name).filter((n) => store.runs.has(n));
}

const REVIEWER = /^[A-Za-z0-9._-]+$/;

let mergeTurn = 0;

/** Draw the step into `screen`. */
export function mountReview(screen) {
  const ran = ranDesigns();
  const roundPanel = el('section', { class: 'panel', 'data-testid': 'round-panel' });
  const importPanel = el('section', { class: 'panel', 'data-testid': 'import-panel' });
  const resultsPanel = el('div', { 'data-testid': 'review-results' });
  const unsaved = el('p', { class: 'caution', role: 'status', 'data-testid': 'review-unsaved', hidden: true });
  const showUnsaved = () => {
    const lost = unsavedReview();
    unsaved.hidden = !lost.length;
    unsaved.textContent = lost.length ? `Not saved yet: ${lost.join(' and ')}. Save before closing this page; it is kept in this page’s memory only.` : '';
  };
  unsaved.addEventListener('review-saved', showUnsaved);

  replaceChildren(
    screen,
    el('h1', { text: 'Review' }),
    el('p', {
      class: 'lede',
      text:
        'Let clinicians judge, pair by pair, whether matched patients are alike. Each reviewer gets one HTML file that opens from disk with no install ' +
        'and no network; design labels, group and outcome are hidden, and pairs and sides are shuffled.',
    }),
    unsaved,
    roundPanel,
    importPanel,
    resultsPanel,
  );
  drawRoundPanel(roundPanel, ran, showUnsaved);
  drawImportPanel(importPanel, resultsPanel, showUnsaved);
  drawResults(resultsPanel, showUnsaved);
  showUnsaved();
}

function drawRoundPanel(panel, ran, showUnsaved) {
  if (!ran.length) {
    replaceChildren(panel, el('h2', { text: 'New review round' }), el('p', { class: 'muted', text: 'Run at least one design on the Designs step to draw a round from it.' }));
    return;
  }
  if (!store.study?.columns?.notes) {
    replaceChildren(panel, el('h2', { text: 'New review round' }), el('p', { class: 'muted', text: 'A rating packet shows notes: give a column the note role on the Data step first.' }));
    return;
  }
  const designBoxes = ran.map((name) => {
    const box = el('input', { type: 'checkbox', 'data-design': name });
    box.checked = true;
    return [name, box];
  });
  const sets = el('input', { type: 'number', min: '1', max: '500', value: '10', 'data-testid': 'round-sets', 'aria-label': 'Matched sets per design' });
  const seed = el('input', { type: 'number', min: '0', value: '1', 'data-testid': 'round-seed', 'aria-label': 'Seed' });
  const stratify = el('input', { type: 'checkbox', 'data-testid': 'round-stratify' });
  const reviewers = el('input', { type: 'text', value: 'rev-a, rev-b', 'data-testid': 'round-reviewers', 'aria-label': 'Reviewer labels', size: '32' });
  const covariates = store.study.columns.covariates ?? [];
  const fieldBoxes = covariates.map((c) => [c, el('input', { type: 'checkbox', 'data-field': c })]);
  const comment = el('input', { type: 'checkbox', 'data-testid': 'round-comment' });
  comment.checked = true;
  const marks = el('input', { type: 'checkbox', 'data-testid': 'round-marks' });
  marks.checked = true;
  const title = el('input', { type: 'text', value: 'Similarity of matched patients', size: '40', 'aria-label': 'Packet title' });
  const instructions = el('textarea', { rows: '2', 'aria-label': 'Words to the reviewers', placeholder: 'Optional: a few words to the reviewers, shown above the pairs.' });
  const anchors = el('textarea', { rows: '5', 'data-testid': 'round-anchors', 'aria-label': 'Scale anchors, one per line, lowest first' });
  plain('packet_defaults', {}).then(
    (d) => {
      if (!anchors.value) anchors.value = d.review.scale.anchors.join('\n');
    },
    () => {},
  );
  const made = el('div', { class: 'round-made', 'data-testid': 'round-made' });
  const drawButton = el('button', { type: 'button', class: 'button', text: 'Draw the round and write the packets', 'data-testid': 'round-draw' });

  drawButton.addEventListener('click', async () => {
    clearError();
    const names = reviewers.value.split(/[,\s]+/).map((r) => r.trim()).filter(Boolean);
    const bad = names.find((r) => !REVIEWER.test(r));
    if (!names.length || bad) {
      showError(
        { kind: 'param', message: bad ? `Reviewer label “${bad}” has characters a file name cannot carry.` : 'Name at least one reviewer.' },
        'The round could not be drawn',
        'Use short labels of letters, digits, dots, dashes or underscores (e.g. rev-a), separated by commas. Use labels, not people’s names, if the packets may travel.',
      );
      return;
    }
    const designs = designBoxes.filter(([, b]) => b.checked).map(([n]) => n);
    if (!designs.length) {
      showError({ kind: 'param', message: 'Choose at least one design to draw pairs from.' }, 'The round could not be drawn', 'Tick a design above.');
      return;
    }
    if (!mayDropKey()) return;
    const lines = anchors.value.split('\n').map((l) => l.trim()).filter(Boolean);
    const request = {
      designs,
      options: {
        reviewers: names,
        review: {
          seed: Math.max(0, Math.floor(Number(seed.value) || 0)),
          sets_per_design: Math.max(1, Math.floor(Number(sets.value) || 1)),
          stratify: stratify.checked,
          scale: { min: 1, max: lines.length, anchors: lines, allow_comment: comment.checked },
          show_fields: fieldBoxes.filter(([, b]) => b.checked).map(([c]) => c),
        },
        marks: marks.checked,
        title: title.value.trim() || 'Similarity of matched patients',
        instructions: instructions.value.trim(),
      },
    };
    try {
      const round = await withSession('Drawing the review round', 'session_round', { request }, { needs: designs });
      review.made = { round_id: round.round_id, pairs: round.pairs, drawn: round.drawn, packets: round.packets };
      review.keyJson = round.key_json;
      review.keyName = `round ${round.round_id} (drawn here)`;
      review.keySaved = false;
      review.files = [];
      review.merged = null;
      showMade(made, showUnsaved);
      showUnsaved();
      document.querySelector('[data-testid="import-panel"]')?.dispatchEvent(new Event('review-changed'));
    } catch (err) {
      if (err?.kind !== 'cancelled') showError(err, 'The round could not be drawn', 'Correct the setting named above and draw again.');
    }
  });

  replaceChildren(
    panel,
    el('h2', { text: 'New review round' }),
    el(
      'fieldset',
      {},
      el('legend', { text: 'Designs to draw matched sets from' }),
      designBoxes.map(([n, b]) => el('label', { class: 'check' }, b, el('span', { text: n }))),
    ),
    el(
      'div',
      { class: 'field-row' },
      el('label', { class: 'field small' }, el('span', { text: 'Sets per design' }), sets),
      el('label', { class: 'field small' }, el('span', { text: 'Seed' }), seed),
      el('label', { class: 'check' }, stratify, el('span', { text: 'Spread the draw over distance quartiles' })),
    ),
    el('div', { class: 'field-row' }, el('label', { class: 'field grow' }, el('span', { text: 'Reviewer labels (comma-separated; each gets a packet)' }), reviewers)),
    fieldBoxes.length
      ? el(
          'fieldset',
          {},
          el('legend', { text: 'Fields shown beside the notes (none by default; group and outcomes are never shown)' }),
          fieldBoxes.map(([c, b]) => el('label', { class: 'check' }, b, el('span', { text: c }))),
        )
      : null,
    el(
      'details',
      { class: 'round-more' },
      el('summary', { text: 'Rating scale and wording' }),
      el('label', { class: 'field grow' }, el('span', { text: 'Scale anchors, one line per point, lowest first (1 to the number of lines)' }), anchors),
      el('div', { class: 'field-row' }, el('label', { class: 'check' }, comment, el('span', { text: 'Offer a comment box' })), el('label', { class: 'check' }, marks, el('span', { text: 'Mark concept terms in the notes' }))),
      el('label', { class: 'field grow' }, el('span', { text: 'Title' }), title),
      el('label', { class: 'field grow' }, el('span', { text: 'Words to the reviewers' }), instructions),
    ),
    el('div', { class: 'field-row' }, drawButton),
    made,
  );
  if (review.made) showMade(made, showUnsaved);
}

function showMade(box, showUnsaved) {
  const m = review.made;
  const packetButtons = m.packets.map((p) => {
    const b = el('button', { type: 'button', class: 'button button-quiet', 'data-testid': 'download-packet', 'data-reviewer': p.reviewer, text: `Packet for ${p.reviewer}` });
    b.addEventListener('click', () => download(p.name, p.html, 'text/html'));
    return b;
  });
  const key = el('button', { type: 'button', class: 'button', 'data-testid': 'download-key', text: 'Round key (JSON)' });
  key.addEventListener('click', () => {
    try {
      download('round-key.json', review.keyJson, 'application/json');
      review.keySaved = true;
    } catch (err) {
      showError(err, 'The key was not saved');
    }
    showUnsaved();
  });
  replaceChildren(
    box,
    el('p', { 'data-testid': 'round-summary', text: `Round ${m.round_id}: ${m.pairs} pairs (${m.drawn.map(([d, n]) => `${n} from ${d}`).join(', ')}).` }),
    el('div', { class: 'field-row' }, packetButtons, key),
    el(
      'p',
      { class: 'caution key-caution', 'data-testid': 'key-caution' },
      el('strong', { text: 'The key stays with you. ' }),
      'It unblinds the round: which design matched each pair and which patients they are. Send each reviewer only their own packet; keep the key under your data-governance rules. Packets hold notes, which are protected health information: send them only by a route your rules allow.',
    ),
  );
}

async function readRatings(fileList) {
  const added = [];
  for (const f of fileList) {
    const bytes = Array.from(new Uint8Array(await f.arrayBuffer()));
    review.files = review.files.filter((x) => x.name !== f.name);
    review.files.push({ name: f.name, bytes });
    added.push(f.name);
  }
  return added;
}

function drawImportPanel(panel, resultsPanel, showUnsaved) {
  const keyInput = el('input', { type: 'file', accept: '.json,application/json', class: 'visually-hidden', 'data-testid': 'import-key' });
  const keyLabel = el('label', { class: 'button button-quiet' }, 'Open a round key…', keyInput);
  const ratingsInput = el('input', { type: 'file', accept: '.csv,text/csv', multiple: true, class: 'visually-hidden', 'data-testid': 'import-ratings' });
  const ratingsLabel = el('label', { class: 'button' }, 'Add ratings files…', ratingsInput);
  const keyLine = el('p', { 'data-testid': 'review-key' });
  const list = el('ul', { class: 'rating-files', 'data-testid': 'rating-files' });
  const level = el('input', { type: 'number', min: '1', value: String(review.level), 'aria-label': 'Alike level', 'data-testid': 'review-level' });
  const confidence = el('select', { 'aria-label': 'Confidence level' }, ['0.9', '0.95', '0.99'].map((v) => el('option', { value: v, text: `${Math.round(Number(v) * 100)}%` })));
  confidence.value = String(review.confidence);
  const zone = el(
    'div',
    { class: 'dropzone is-compact', 'data-testid': 'ratings-drop' },
    el('p', { class: 'dropzone-lead', text: 'Drop ratings files (CSV) here' }),
    el('div', { class: 'field-row' }, ratingsLabel, keyLabel),
  );

  const refresh = () => {
    keyLine.textContent = review.keyJson ? `Key: ${review.keyName}.` : 'No key yet: draw a round above or open the round key that came with the packets.';
    replaceChildren(
      list,
      review.files.map((f) => {
        const remove = el('button', { type: 'button', class: 'link-button', text: 'remove', 'aria-label': `Remove ${f.name}` });
        remove.addEventListener('click', () => {
          review.files = review.files.filter((x) => x !== f);
          merge();
        });
        return el('li', { 'data-file': f.name }, el('span', { class: 'file-name', text: f.name }), ' ', remove);
      }),
    );
  };

  async function merge() {
    refresh();
    if (!review.keyJson || !review.files.length) {
      review.merged = null;
      drawResults(resultsPanel, showUnsaved);
      return;
    }
    clearError();
    // Only the latest merge may show: an earlier one can answer later.
    mergeTurn += 1;
    const mine = mergeTurn;
    const inputs = mergeInputs();
    const upload = { upload: { key_json: review.keyJson, files: review.files, params: params() } };
    try {
      let merged;
      try {
        merged = await plain('review_merge', upload);
      } catch (err) {
        // The worker died under the call and a fresh one took its place;
        // everything the merge needs is here, so ask the fresh one.
        if (err?.kind !== 'internal') throw err;
        merged = await plain('review_merge', upload);
      }
      if (mine !== mergeTurn) return;
      review.merged = merged;
      review.mergedFrom = inputs;
    } catch (err) {
      if (mine !== mergeTurn) return;
      review.merged = null;
      if (err?.kind !== 'cancelled') showError(err, 'The ratings could not be merged', 'Check that the key belongs to the round the packets came from.');
    }
    drawResults(resultsPanel, showUnsaved);
  }

  keyInput.addEventListener('change', async () => {
    const f = keyInput.files?.[0];
    keyInput.value = '';
    if (!f || !mayDropKey()) return;
    review.keyJson = await f.text();
    review.keyName = f.name;
    review.made = null;
    await merge();
  });
  ratingsInput.addEventListener('change', async () => {
    const files = [...(ratingsInput.files ?? [])];
    ratingsInput.value = '';
    if (!files.length) return;
    await readRatings(files);
    await merge();
  });
  zone.addEventListener('dragenter', (e) => {
    e.preventDefault();
    zone.classList.add('is-over');
  });
  zone.addEventListener('dragover', (e) => e.preventDefault());
  zone.addEventListener('dragleave', () => zone.classList.remove('is-over'));
  zone.addEventListener('drop', async (e) => {
    e.preventDefault();
    zone.classList.remove('is-over');
    const files = [...(e.dataTransfer?.files ?? [])];
    const keys = files.filter((f) => /\.json$/i.test(f.name));
    if (keys.length && mayDropKey()) {
      review.keyJson = await keys[0].text();
      review.keyName = keys[0].name;
      review.made = null;
    }
    await readRatings(files.filter((f) => !/\.json$/i.test(f.name)));
    await merge();
  });
  level.addEventListener('change', () => {
    review.level = Math.floor(Number(level.value) || 4);
    merge();
  });
  confidence.addEventListener('change', () => {
    review.confidence = Number(confidence.value);
    merge();
  });
  panel.addEventListener('review-changed', () => merge());

  replaceChildren(
    panel,
    el('h2', { text: 'Ratings' }),
    el('p', { class: 'hint', text: 'Add the ratings files the reviewers exported (any number, any order). They are read here and kept in this page’s memory only.' }),
    keyLine,
    zone,
    list,
    el(
      'div',
      { class: 'field-row' },
      el('label', { class: 'field small' }, el('span', { text: 'A pair counts as alike at rating' }), level),
      el('label', { class: 'field' }, el('span', { text: 'Confidence level' }), confidence),
    ),
  );
  refresh();
}

function issuesList(issues) {
  if (!issues.length) return el('p', { class: 'ok', 'data-testid': 'merge-clean', text: 'Every row of every file was read; no duplicates, no unknown pairs.' });
  return el(
    'ul',
    { class: 'problems', 'data-testid': 'merge-issues' },
    issues.map((i) => {
      const where = [i.file, i.row ? `row ${i.row}` : null, i.column ? `column “${i.column}”` : null].filter(Boolean).join(', ');
      return el('li', { class: i.severity === 'warning' ? 'warn' : 'error', 'data-severity': i.severity }, el('strong', { text: `${i.severity === 'error' ? 'Left out' : 'Note'}: ${where}: ` }), i.message);
    }),
  );
}

function table(testId, caption, head, rows) {
  return el(
    'div',
    { class: 'table-wrap' },
    el(
      'table',
      { class: 'columns', 'data-testid': testId },
      el('caption', { text: caption }),
      el('thead', {}, el('tr', {}, head.map((h, i) => el('th', { scope: 'col', class: i ? 'num' : '', text: h })))),
      el('tbody', {}, rows.map((r) => el('tr', {}, r.map((c, i) => (i ? el('td', { class: 'num', text: c }) : el('th', { scope: 'row', text: c })))))),
    ),
  );
}

const ci = (lo, hi, d = 3) => (Number.isFinite(lo) && Number.isFinite(hi) ? interval(lo, hi, d) : '—');

function agreementTable(ag, level) {
  const rows = [];
  for (const k of ag.kappas ?? []) {
    for (const [w, v] of [['linear', k.linear], ['quadratic', k.quadratic]]) {
      rows.push([`weighted kappa (${w}), ${k.first} and ${k.second}`, v ? fixed(v.kappa) : '—', v ? ci(v.ci_low, v.ci_high) : '—', String(v ? v.n : k.pairs)]);
    }
  }
  for (const [name, a] of [['Krippendorff’s alpha, ordinal', ag.alpha_ordinal], ['Krippendorff’s alpha, interval', ag.alpha_interval]]) {
    if (a) rows.push([name, fixed(a.alpha), ci(a.ci_low, a.ci_high), String(a.n_units)]);
  }
  if (ag.icc) for (const x of ag.icc.rows ?? []) rows.push([`intraclass correlation ${x.label}`, fixed(x.icc), ci(x.ci_low, x.ci_high), String(ag.icc.n_units)]);
  return table('agreement-table', `Agreement between reviewers (Cohen 1968; Krippendorff 2004; Shrout & Fleiss 1979), ${level} intervals`, ['Statistic', 'Value', `${level} interval`, 'Pairs'], rows);
}

function drawResults(panel, showUnsaved) {
  const m = review.merged;
  showUnsaved();
  if (!m) {
    replaceChildren(panel);
    return;
  }
  const parts = [
    el('h2', { text: `Round ${m.round_id}` }),
    el('p', { 'data-testid': 'merge-summary', text: `${m.accepted} ratings accepted from ${review.files.length} file${review.files.length === 1 ? '' : 's'}; ${m.pairs_in_round} pairs in the round; packets written for ${m.reviewers.join(', ')}.` }),
    issuesList(m.issues ?? []),
  ];
  const r = m.results;
  if (r) {
    const level = `${Math.round(100 * r.comparison.confidence)}%`;
    const ag = r.agreement;
    parts.push(
      el('h3', { text: 'Agreement between reviewers' }),
      el('p', { class: 'hint', text: `${ag.pairs_rated} of ${r.pairs_in_round} pairs rated; ${ag.pairs_complete} by every reviewer (${ag.reviewers.join(', ')}).` }),
      agreementTable(ag, level),
    );
    for (const k of ag.kappas ?? []) for (const n of k.notes ?? []) parts.push(el('p', { class: 'hint', text: `${k.first} and ${k.second}: ${n}` }));
    for (const n of ag.notes ?? []) parts.push(el('p', { class: 'hint', text: n }));
    for (const w of r.warnings ?? []) parts.push(el('p', { class: 'hint', text: w }));
    const c = r.comparison;
    parts.push(
      el('h3', { text: 'Rated similarity per design' }),
      table(
        'comparison-table',
        `Mean of each pair’s mean rating, with ${level} interval; share of pairs rated ${c.level} or more; Spearman’s rank correlation of the design’s distance with the rating`,
        ['Design', 'Pairs rated', 'Mean rating', `${level} interval`, `Share ≥ ${c.level} (interval)`, 'Distance vs rating'],
        (c.designs ?? []).map((d) => [
          d.design,
          `${d.pairs_rated} of ${d.pairs_drawn}`,
          fixed(d.mean, 2),
          ci(d.ci_low, d.ci_high, 2),
          (Number.isFinite(d.share_alike) ? `${Math.round(100 * d.share_alike)}%` : '—') +
            (Number.isFinite(d.share_ci_low) && Number.isFinite(d.share_ci_high) ? ` (${Math.round(100 * d.share_ci_low)}–${Math.round(100 * d.share_ci_high)}%)` : ''),
          d.distance_vs_rating ? `rho ${fixed(d.distance_vs_rating.rho, 2)}, p ${pText(d.distance_vs_rating.p_value)}` : '—',
        ]),
      ),
    );
    if (c.contrasts?.length) {
      parts.push(
        table(
          'contrast-table',
          'Differences between designs (Welch’s t on pair means, Holm-adjusted p)',
          ['Designs', 'Difference', `${level} interval`, 'p', 'Holm p', 'Shared pairs'],
          c.contrasts.map((x) => [`${x.first} minus ${x.second}`, fixed(x.difference, 2), ci(x.ci_low, x.ci_high, 2), pText(x.p_value), pText(x.p_holm), String(x.shared_pairs)]),
        ),
      );
    }
    if (c.measures?.length) {
      parts.push(
        table(
          'measure-table',
          'Which distance tracks the reviewers: Spearman’s rho of each distance with the pair’s mean rating (negative: closer pairs rated more alike)',
          ['Distance', 'rho', 'p', 'Pairs'],
          c.measures.map((x) => [x.name, x.correlation ? fixed(x.correlation.rho, 2) : '—', x.correlation ? pText(x.correlation.p_value) : '—', x.correlation ? String(x.correlation.n) : '—']),
        ),
      );
    }
    if (c.cautions?.length) parts.push(el('aside', { class: 'caution', role: 'note' }, c.cautions.map((w) => el('p', { text: w }))));
  }
  if (r) {
    const save = el('button', { type: 'button', class: 'button', 'data-testid': 'save-review', text: 'Save the results (JSON)' });
    save.addEventListener('click', () => {
      try {
        download(`review-${m.round_id}.json`, resultsJson(m), 'application/json');
        reviewExported();
      } catch (err) {
        showError(err, 'The results were not saved');
      }
    });
    parts.push(
      el(
        'div',
        { class: 'field-row' },
        save,
        el('span', { class: 'hint', text: 'The merge problems, the agreement and the design comparison, as shown here. The report on the Export step carries them too.' }),
      ),
    );
  }
  replaceChildren(panel, el('section', { class: 'panel' }, parts));
  if (r) showNotice(`Ratings merged: ${m.accepted} ratings of round ${m.round_id}.`);
}

/** The results file: what the screen shows, with where the ratings came from. */
function resultsJson(m) {
  const out = {
    round_id: m.round_id,
    pairs_in_round: m.pairs_in_round,
    reviewers: m.reviewers,
    accepted: m.accepted,
    files: review.files.map((f) => f.name),
    issues: m.issues,
    results: m.results,
  };
  // Infinite and undefined numbers have no JSON form; null says "none".
  return `${JSON.stringify(out, (k, v) => (typeof v === 'number' && !Number.isFinite(v) ? null : v), 2)}\n`;
}

// The Designs step: several named designs, each with every setting of the
// study file; create, duplicate, edit, delete; run all; one result line per
// design (matched, unmatched, worst absolute SMD).

import { el, append, replaceChildren, formatCount } from '../dom.js';
import { showError, clearError } from '../banner.js';
import { store, changed, saveStudy, normalizeDesign, clone } from '../store.js';
import { runDesigns } from '../work.js';

const DISTANCES = [
  ['score', 'score: difference of the logit score'],
  ['mahalanobis', 'mahalanobis: on chosen covariates'],
  ['note-cosine', 'note-cosine: between note vectors'],
  ['blend', 'blend: weighted sum of the three'],
];
const ALGORITHMS = [
  ['optimal', 'optimal: least total distance'],
  ['greedy', 'greedy: nearest available, largest score first'],
];

const FIT_METHODS = {
  maximum_likelihood: 'logistic regression by maximum likelihood',
  firth: 'Firth-type penalized logistic regression (Firth 1993)',
  ridge: 'ridge-penalized logistic regression',
};

function note(cls, text) {
  return el('li', { class: cls, text });
}

/** Candidate score terms: covariates, then note features. */
function candidateTerms() {
  const c = store.study.columns;
  const notes = (store.prepared?.note_features ?? []).map((f) => f.name);
  const concepts = store.study.concepts.map((k) => `concept.${k.name}`);
  return [...new Set([...c.covariates, ...concepts, ...notes])];
}

/** Draw the step into `screen`. */
export function mountDesigns(screen, go) {
  if (!store.study) {
    replaceChildren(screen, el('h1', { text: 'Designs' }), el('p', { class: 'lede', text: 'Open a cohort on the Data step first.' }));
    return;
  }
  const list = el('div', { class: 'designs', 'data-testid': 'design-list' });
  const results = el('table', { class: 'columns results', 'data-testid': 'design-results' });
  const notes = el('section', { class: 'run-notes-list', 'aria-label': 'What each run did' });

  function save() {
    saveStudy();
    changed('study');
  }

  function uniqueName(base) {
    let name = base;
    let k = 2;
    while (store.study.designs.some((d) => d.name === name)) name = `${base}-${k++}`;
    return name;
  }

  function draw() {
    replaceChildren(list, store.study.designs.map((d, i) => designCard(d, i)));
    drawResults();
  }

  function drawResults() {
    const head = el(
      'thead',
      {},
      el('tr', {}, ['Design', 'Matched treated', 'Unmatched treated', 'Comparison used', 'Worst |SMD| after', 'Time'].map((t) => el('th', { scope: 'col', text: t }))),
    );
    const rows = store.study.designs.map((d) => {
      const r = store.runs.get(d.name);
      if (!r) {
        return el('tr', { 'data-testid': 'design-result', 'data-design': d.name }, el('th', { scope: 'row', text: d.name }), el('td', { colspan: '5', class: 'muted', text: 'not run yet' }));
      }
      const s = r.summary;
      const worst = s.worst_abs_smd_after;
      return el(
        'tr',
        { 'data-testid': 'design-result', 'data-design': d.name, 'data-matched': s.matched_treated, 'data-worst': worst ?? '' },
        el('th', { scope: 'row', text: d.name }),
        el('td', { class: 'num', text: formatCount(s.matched_treated) }),
        el('td', { class: 'num', text: formatCount(s.unmatched_treated) }),
        el('td', { class: 'num', text: formatCount(s.matched_comparison) }),
        el('td', { class: `num ${worst > 0.1 ? 'over' : ''}`, text: worst === null ? '—' : `${worst.toFixed(3)}${worst > 0.1 ? ' (above 0.1)' : ''}` }),
        el('td', { class: 'num muted', text: r.cached ? 'kept' : `${Math.round(r.ms ?? 0)} ms` }),
      );
    });
    replaceChildren(results, el('caption', { text: 'One line per design: the latest run.' }), head, el('tbody', {}, rows));
    drawRunNotes();
  }

  // What each run decided on the user's behalf: rows left out, cells
  // filled, how the score model was fitted and what it warned about,
  // balance terms without an SMD, parts skipped. The command line writes
  // the same record to summary.json; here it must be seen, not only saved.
  function drawRunNotes() {
    const blocks = store.study.designs
      .filter((d) => store.runs.has(d.name))
      .map((d) => {
        const s = store.runs.get(d.name).summary;
        const items = [
          note('ok', `${formatCount(s.rows_used)} of ${formatCount(s.rows_read)} rows used: ${formatCount(s.treated)} treated, ${formatCount(s.comparison)} comparison.`),
          ...s.left_out.map((l) => note('warn', `Row ${l.row} left out: ${l.reason}`)),
          ...s.fills.map((f) => note('warn', `Column “${f.column}”: ${formatCount(f.cells)} missing cells filled (${f.method}).`)),
          note(s.score_model.converged ? 'ok' : 'warn', `Score model: ${FIT_METHODS[s.score_model.method] ?? s.score_model.method}, ${s.score_model.converged ? `converged in ${s.score_model.iterations} steps` : 'did not converge'}.`),
          ...s.score_model.warnings.map((w) => note('warn', /^score model\b/i.test(w) ? `Score model${w.slice('score model'.length)}` : `Score model: ${w}`)),
          s.undefined_smd.length
            ? note('warn', `SMD undefined (NA; no spread in the unmatched sample): ${s.undefined_smd.join(', ')}.`)
            : null,
          ...(s.skipped ?? []).map((w) => note('warn', `Not computed: ${w}`)),
        ];
        return el(
          'div',
          { class: 'run-notes', 'data-testid': 'run-notes', 'data-design': d.name },
          el('h3', { text: `What the run of ${d.name} did` }),
          el('ul', { class: 'problems' }, items),
        );
      });
    replaceChildren(notes, blocks);
  }

  function designCard(d, i) {
    const card = el('fieldset', { class: 'design-card', 'data-testid': 'design-card', 'data-design': d.name });
    const title = el('legend', { text: `Design ${i + 1}` });
    const field = (label, input, cls = '') => el('label', { class: `field ${cls}` }, el('span', { text: label }), input);
    const text = (value, label, onValue, testId) => {
      const input = el('input', { type: 'text', value: value ?? '', 'aria-label': label, 'data-testid': testId, spellcheck: 'false' });
      input.addEventListener('change', () => {
        onValue(input.value);
        save();
      });
      return input;
    };
    const select = (options, value, label, onValue, testId) => {
      const s = el('select', { 'aria-label': label, 'data-testid': testId }, options.map(([v, t]) => el('option', { value: v, text: t })));
      s.value = value;
      s.addEventListener('change', () => {
        onValue(s.value);
        save();
        draw();
      });
      return s;
    };
    const number = (value, label, attrs, onValue, testId) => {
      const input = el('input', { type: 'number', value: value ?? '', 'aria-label': label, 'data-testid': testId, ...attrs });
      input.addEventListener('change', () => {
        onValue(input.value === '' ? null : Number(input.value));
        save();
      });
      return input;
    };
    const splitList = (v) => v.split(',').map((x) => x.trim()).filter(Boolean);

    const name = text(d.name, `Name of design ${i + 1}`, (v) => {
      const old = d.name;
      d.name = v.trim();
      const idx = store.compare.indexOf(old);
      if (idx >= 0) store.compare[idx] = d.name;
    }, 'design-name');

    // Score terms: a box per candidate, plus free text for square() and product().
    const candidates = candidateTerms();
    const boxes = candidates.map((t) => {
      const box = el('input', { type: 'checkbox', 'data-term': t });
      box.checked = d.score_terms.includes(t);
      box.addEventListener('change', () => {
        if (box.checked && !d.score_terms.includes(t)) d.score_terms.push(t);
        if (!box.checked) d.score_terms = d.score_terms.filter((x) => x !== t);
        save();
      });
      return el('label', { class: `check term ${t.includes('.') ? 'is-note' : ''}` }, box, el('span', { text: t }));
    });
    const extra = text(
      d.score_terms.filter((t) => !candidates.includes(t)).join(', '),
      'Other score terms, comma separated, e.g. square(age)',
      (v) => {
        d.score_terms = [...d.score_terms.filter((t) => candidates.includes(t)), ...splitList(v)];
      },
      'design-extra-terms',
    );
    const caliperOn = el('input', { type: 'checkbox', 'data-testid': 'design-caliper-on' });
    caliperOn.checked = d.caliper !== null;
    const caliper = number(d.caliper ?? 0.2, 'Caliper in SDs of the logit score', { min: '0.01', step: '0.05' }, (v) => {
      if (caliperOn.checked) d.caliper = v;
    }, 'design-caliper');
    caliper.disabled = d.caliper === null;
    caliperOn.addEventListener('change', () => {
      d.caliper = caliperOn.checked ? Number(caliper.value) || 0.2 : null;
      caliper.disabled = !caliperOn.checked;
      save();
    });
    const categorical = store.file.summary.column_summaries
      .filter((c) => (store.study.columns.kinds[c.name] ?? c.kind) !== 'text' && c.distinct <= 30 && store.study.columns.covariates.includes(c.name))
      .map((c) => c.name);
    const exact = categorical.map((c) => {
      const box = el('input', { type: 'checkbox' });
      box.checked = d.exact.includes(c);
      box.addEventListener('change', () => {
        d.exact = box.checked ? [...d.exact, c] : d.exact.filter((x) => x !== c);
        save();
      });
      return el('label', { class: 'check' }, box, el('span', { text: c }));
    });
    const reuse = el('input', { type: 'checkbox', 'data-testid': 'design-reuse' });
    reuse.checked = d.reuse;
    reuse.addEventListener('change', () => {
      d.reuse = reuse.checked;
      save();
    });
    const blend = d.blend ?? { score: 1, mahalanobis: 1, note: 1 };
    const blendInputs = ['score', 'mahalanobis', 'note'].map((k) =>
      field(`Blend weight: ${k}`, number(blend[k], `Blend weight of the ${k} distance`, { min: '0', step: '0.1' }, (v) => {
        d.blend = { ...(d.blend ?? blend), [k]: v ?? 0 };
      }, `design-blend-${k}`), 'small'),
    );

    const duplicate = el('button', { type: 'button', class: 'button button-quiet', text: 'Duplicate', 'data-testid': 'design-duplicate' });
    duplicate.addEventListener('click', () => {
      const copy = clone(d);
      copy.name = uniqueName(`${d.name}-copy`);
      store.study.designs.splice(i + 1, 0, copy);
      save();
      draw();
    });
    const remove = el('button', { type: 'button', class: 'button button-quiet', text: 'Delete', 'data-testid': 'design-delete' });
    remove.addEventListener('click', () => {
      store.study.designs.splice(i, 1);
      store.runs.delete(d.name);
      store.compare = store.compare.filter((n) => n !== d.name);
      save();
      draw();
    });
    const runOne = el('button', { type: 'button', class: 'button button-quiet', text: 'Run this design' });
    runOne.addEventListener('click', () => run([d.name]));

    return append(
      card,
      title,
      el('div', { class: 'field-row' }, field('Name', name), duplicate, remove, runOne),
      el('div', { class: 'terms-box' }, el('p', { class: 'field-title', text: 'Score model terms (note features marked with a dot in their name)' }), el('div', { class: 'term-grid' }, boxes)),
      field('Other score terms (square(x), product(x, y)), comma separated', extra, 'grow'),
      el(
        'div',
        { class: 'field-row' },
        field('Distance', select(DISTANCES, d.distance, 'Distance', (v) => (d.distance = v), 'design-distance')),
        field('Algorithm', select(ALGORITHMS, d.algorithm, 'Algorithm', (v) => (d.algorithm = v), 'design-algorithm')),
        field('Controls per treated', number(d.controls, 'Controls per treated unit', { min: '1', max: '20', step: '1' }, (v) => (d.controls = v ?? 1), 'design-controls'), 'small'),
        el('label', { class: 'check' }, reuse, el('span', { text: 'reuse comparison units' })),
      ),
      el(
        'div',
        { class: 'field-row' },
        el('label', { class: 'check' }, caliperOn, el('span', { text: 'caliper' })),
        field('Caliper (SDs of the logit score; 0.2 per Austin 2011)', caliper, 'small'),
        field('Note vectors of note-cosine', select([['tfidf', 'tfidf'], ['latent', 'latent']], d.note_vectors, 'Note vectors', (v) => (d.note_vectors = v), 'design-note-vectors')),
      ),
      exact.length ? el('div', { class: 'terms-box' }, el('p', { class: 'field-title', text: 'Exact agreement on' }), el('div', { class: 'term-grid' }, exact)) : null,
      d.distance === 'mahalanobis' || d.distance === 'blend'
        ? field('Mahalanobis covariates, comma separated (empty: the score terms)', text(d.mahalanobis_terms.join(', '), 'Mahalanobis covariates', (v) => (d.mahalanobis_terms = splitList(v)), 'design-mahalanobis'), 'grow')
        : null,
      d.distance === 'blend' ? el('div', { class: 'field-row' }, blendInputs) : null,
    );
  }

  async function run(names) {
    clearError();
    if (!names.length) {
      // A study file may come without designs (the command line refuses
      // one); here the button must still answer.
      const message = 'the study has no [[designs]] yet; add one with “New design”, or import a study file that has some';
      showError({ kind: 'study', key: 'designs', message, detail: message }, 'There is no design to run', 'Add a design, then run it.');
      return;
    }
    try {
      await runDesigns(names);
      for (const n of names) if (!store.compare.includes(n) && store.compare.length < 6) store.compare.push(n);
      drawResults();
    } catch (err) {
      // A fault found in the cohort only now (a column is used for the first
      // time) belongs to the file, and the title says which file.
      if (err?.kind === 'data') showError(err, `A design could not be run on “${store.file?.name ?? 'the cohort'}”`, 'Correct the file and open it again, or change the roles or settings that use this column.');
      else if (err?.kind !== 'cancelled') showError(err, 'A design could not be run', 'Change the setting named in the message and run again.');
      drawResults();
    }
  }

  const add = el('button', { type: 'button', class: 'button button-quiet', 'data-testid': 'design-add', text: 'New design' });
  add.addEventListener('click', () => {
    store.study.designs.push(normalizeDesign({ name: uniqueName('design'), score_terms: [...store.study.columns.covariates] }));
    save();
    draw();
  });
  const runAll = el('button', { type: 'button', class: 'button', 'data-testid': 'run-all', text: 'Run all designs' });
  runAll.addEventListener('click', () => run(store.study.designs.map((d) => d.name)));
  const toBalance = el('button', { type: 'button', class: 'button button-quiet', text: 'See the balance' });
  toBalance.addEventListener('click', () => go('balance'));

  replaceChildren(
    screen,
    el('h1', { text: 'Designs' }),
    el('p', {
      class: 'lede',
      text:
        'A design is a recipe for matching: the terms of the score model (a logistic regression giving the propensity score, ' +
        'Rosenbaum & Rubin 1983), how distance is measured, a caliper, columns that must agree, how many comparison units ' +
        'per treated one, and the algorithm. Build several and compare their balance.',
    }),
    el('div', { class: 'field-row sticky-actions' }, add, runAll, toBalance),
    results,
    notes,
    list,
  );
  draw();
}

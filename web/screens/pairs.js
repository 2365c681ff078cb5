// The Side by side step: one matched set at a time, the treated patient's
// note beside its comparison patient's, concept mentions marked, a table of
// structured differences, the distance, and ways to walk through the sets.

import { el, append, replaceChildren, formatCount } from '../dom.js';
import { showError } from '../banner.js';
import { store } from '../store.js';
import { withSession } from '../work.js';
import { markedNote, mentionLegend } from '../highlight.js';

const ORDERS = [
  ['file', 'in matched-set order'],
  ['largest', 'largest distance first'],
  ['random', 'random order'],
];

let keyHandler = null;

/** Draw the step into `screen`. */
export function mountPairs(screen) {
  if (keyHandler) document.removeEventListener('keydown', keyHandler);
  const ran = (store.study?.designs ?? []).map((d) => d.name).filter((n) => store.runs.has(n));
  if (!ran.length) {
    replaceChildren(screen, el('h1', { text: 'Side by side' }), el('p', { class: 'lede', text: 'Run a design on the Designs step first.' }));
    return;
  }
  const design = el('select', { 'aria-label': 'Design', 'data-testid': 'pair-design' }, ran.map((n) => el('option', { value: n, text: n })));
  design.value = store.compare[0] && ran.includes(store.compare[0]) ? store.compare[0] : ran[0];
  const order = el('select', { 'aria-label': 'Order of the matched sets', 'data-testid': 'pair-order' }, ORDERS.map(([v, t]) => el('option', { value: v, text: t })));
  const covariates = store.study.columns.covariates;
  const filter = el(
    'select',
    { 'aria-label': 'Show only sets that disagree on a covariate', 'data-testid': 'pair-filter' },
    el('option', { value: '', text: 'all sets' }),
    covariates.map((c) => el('option', { value: c, text: `disagreeing on ${c}` })),
  );
  const position = el('p', { class: 'pair-position', 'data-testid': 'pair-position', 'aria-live': 'polite' });
  const view = el('section', { class: 'pair-view', 'data-testid': 'pair-view' });
  const buttons = {
    prev: el('button', { type: 'button', class: 'button button-quiet', text: '← Previous', 'data-testid': 'pair-prev' }),
    next: el('button', { type: 'button', class: 'button button-quiet', text: 'Next →', 'data-testid': 'pair-next' }),
    largest: el('button', { type: 'button', class: 'button button-quiet', text: 'Largest distance', 'data-testid': 'pair-largest' }),
    random: el('button', { type: 'button', class: 'button button-quiet', text: 'Random', 'data-testid': 'pair-random' }),
  };

  let sequence = [];
  let at = 0;
  let seed = 1;

  // A small seeded generator (mulberry32, a public-domain 32-bit mixer) so
  // a random walk through the sets is repeatable within a session.
  function random() {
    seed = (seed + 0x6d2b79f5) | 0;
    let t = seed;
    t = Math.imul(t ^ (t >>> 15), t | 1);
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61);
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
  }

  async function rebuild() {
    const run = store.runs.get(design.value);
    let idx = run.sets.map((_, i) => i);
    let disagreement = null;
    if (filter.value) {
      try {
        disagreement = await withSession('Comparing the sets', 'session_disagreement', { name: design.value, column: filter.value }, { needs: [design.value] });
      } catch (err) {
        if (err?.kind !== 'cancelled') showError(err, 'The sets could not be compared');
        return;
      }
      idx = idx.filter((i) => disagreement[i] > 0);
      idx.sort((a, b) => disagreement[b] - disagreement[a] || a - b);
    }
    if (order.value === 'largest') idx.sort((a, b) => run.sets[b].distance - run.sets[a].distance || a - b);
    if (order.value === 'random') {
      for (let i = idx.length - 1; i > 0; i -= 1) {
        const j = Math.floor(random() * (i + 1));
        [idx[i], idx[j]] = [idx[j], idx[i]];
      }
    }
    sequence = idx;
    at = 0;
    await show();
  }

  async function show() {
    const run = store.runs.get(design.value);
    if (!sequence.length) {
      position.textContent = filter.value ? `No matched set disagrees on ${filter.value}.` : 'This design matched no set.';
      replaceChildren(view);
      return;
    }
    const set = sequence[at];
    position.textContent = `Set ${formatCount(set + 1)} of ${formatCount(run.sets.length)} · showing ${formatCount(at + 1)} of ${formatCount(sequence.length)} in this order`;
    try {
      const pair = await withSession('Opening the set', 'session_pair', { name: design.value, set }, { needs: [design.value] });
      drawPair(pair, run);
    } catch (err) {
      if (err?.kind !== 'cancelled') showError(err, 'The matched set could not be opened');
    }
  }

  function drawPair(pair, run) {
    const units = pair.units;
    const notes = units.map((u, k) =>
      el(
        'article',
        { class: `pair-note ${u.treated ? 'is-treated' : 'is-comparison'}`, 'data-testid': 'pair-note' },
        el('h3', { text: `${u.treated ? 'Treated' : `Comparison${units.length > 2 ? ` ${k}` : ''}`} · id ${u.id}` }),
        u.treated ? null : el('p', { class: 'pair-distance', 'data-testid': 'pair-distance', text: `distance ${u.distance.toFixed(4)}` }),
        markedNote(u.note, u.highlights),
      ),
    );
    const fmtSd = (v) => (v === null || v === undefined ? '' : `${v.toFixed(2)} SD`);
    const rows = pair.fields.map((f) =>
      el(
        'tr',
        { class: f.differs ? 'differs' : '', 'data-column': f.column, 'data-differs': String(f.differs) },
        el('th', { scope: 'row', class: 'column-name', text: f.column }),
        f.values.map((v) => el('td', { text: v === '' ? '(missing)' : v })),
        el('td', { text: f.differs ? `differs ${fmtSd(f.sd_units)}`.trim() : 'same' }),
      ),
    );
    const table = el(
      'table',
      { class: 'columns diff', 'data-testid': 'pair-fields' },
      el('caption', { text: 'Covariates of the set; differences in SDs of the column over the rows used. Outcomes are not shown while designs are compared, so the choice of design cannot lean on them.' }),
      el(
        'thead',
        {},
        el('tr', {}, el('th', { scope: 'col', text: 'Field' }), units.map((u) => el('th', { scope: 'col', text: u.treated ? 'Treated' : 'Comparison' })), el('th', { scope: 'col', text: 'Agreement' })),
      ),
      el('tbody', {}, rows),
    );
    const worst = Math.max(...units.map((u) => u.distance));
    replaceChildren(
      view,
      el('p', { class: 'pair-summary', text: `Design ${run.design.name} (${run.design.distance} distance): the largest distance in this set is ${worst.toFixed(4)}.` }),
      mentionLegend(),
      el('div', { class: `pair-notes cols-${Math.min(units.length, 3)}` }, notes),
      el('div', { class: 'table-wrap' }, table),
    );
  }

  const move = (delta) => {
    if (!sequence.length) return;
    at = (at + delta + sequence.length) % sequence.length;
    show();
  };
  buttons.prev.addEventListener('click', () => move(-1));
  buttons.next.addEventListener('click', () => move(1));
  buttons.largest.addEventListener('click', () => {
    order.value = 'largest';
    rebuild();
  });
  buttons.random.addEventListener('click', () => {
    if (!sequence.length) return;
    at = Math.floor(random() * sequence.length);
    show();
  });
  for (const s of [design, order, filter]) s.addEventListener('change', rebuild);

  keyHandler = (event) => {
    if (!screen.isConnected) {
      document.removeEventListener('keydown', keyHandler);
      return;
    }
    const tag = event.target?.tagName;
    if (tag === 'INPUT' || tag === 'TEXTAREA' || tag === 'SELECT' || event.ctrlKey || event.metaKey || event.altKey) return;
    const keys = { ArrowRight: () => move(1), j: () => move(1), ArrowLeft: () => move(-1), k: () => move(-1), l: () => buttons.largest.click(), r: () => buttons.random.click() };
    const fn = keys[event.key];
    if (fn) {
      event.preventDefault();
      fn();
    }
  };
  document.addEventListener('keydown', keyHandler);

  replaceChildren(
    screen,
    el('h1', { text: 'Side by side' }),
    el('p', { class: 'lede', text: 'Read matched patients next to each other: are they really alike? Numbers cannot tell you what a note says.' }),
    el(
      'div',
      { class: 'field-row' },
      el('label', { class: 'field' }, el('span', { text: 'Design' }), design),
      el('label', { class: 'field' }, el('span', { text: 'Order' }), order),
      el('label', { class: 'field' }, el('span', { text: 'Filter' }), filter),
    ),
    el('div', { class: 'field-row' }, buttons.prev, buttons.next, buttons.largest, buttons.random),
    el(
      'p',
      { class: 'shortcuts', 'data-testid': 'shortcuts' },
      'Keys: ',
      el('kbd', { text: '→' }), ' or ', el('kbd', { text: 'j' }), ' next · ',
      el('kbd', { text: '←' }), ' or ', el('kbd', { text: 'k' }), ' previous · ',
      el('kbd', { text: 'l' }), ' largest distance first · ',
      el('kbd', { text: 'r' }), ' random set',
    ),
    position,
    view,
  );
  rebuild();
}

// The Balance step: the Love plot (designs overlaid), the balance table
// (sortable; note-derived rows marked; before and after for each design),
// the overlap plot of one design, and its term shift. Both plots are drawn
// by the core in the engine's worker; this page only shows the picture.

import { el, append, replaceChildren } from '../dom.js';
import { showError } from '../banner.js';
import { store } from '../store.js';
import { withSession, plain } from '../work.js';

const MAX_COMPARED = 6;

/** Put a picture the worker painted into `canvas`. */
export function showBitmap(canvas, picture) {
  canvas.width = picture.width;
  canvas.height = picture.height;
  const ctx = canvas.getContext('2d');
  ctx.drawImage(picture.bitmap, 0, 0);
  picture.bitmap.close();
  canvas.dataset.drawn = 'true';
}

function ranDesigns() {
  return (store.study?.designs ?? []).map((d) => d.name).filter((n) => store.runs.has(n));
}

/** Draw the step into `screen`. */
export function mountBalance(screen) {
  const ran = ranDesigns();
  if (!ran.length) {
    replaceChildren(screen, el('h1', { text: 'Balance' }), el('p', { class: 'lede', text: 'Run at least one design on the Designs step first.' }));
    return;
  }
  store.compare = store.compare.filter((n) => ran.includes(n));
  if (!store.compare.length) store.compare = ran.slice(0, MAX_COMPARED);

  const picker = el('fieldset', { class: 'compare-picker' }, el('legend', { text: `Designs compared (up to ${MAX_COMPARED})` }));
  for (const name of ran) {
    const box = el('input', { type: 'checkbox', 'data-design': name });
    box.checked = store.compare.includes(name);
    box.addEventListener('change', () => {
      if (box.checked) {
        if (store.compare.length >= MAX_COMPARED) {
          box.checked = false;
          return;
        }
        store.compare = ran.filter((n) => n === name || store.compare.includes(n));
      } else {
        store.compare = store.compare.filter((n) => n !== name);
      }
      drawLove();
      drawTable();
    });
    picker.append(el('label', { class: 'check' }, box, el('span', { text: name })));
  }

  const love = el('canvas', { 'data-testid': 'love-plot', role: 'img', 'aria-label': 'Love plot: absolute standardized mean difference of each covariate before and after matching' });
  const loveWrap = el('div', { class: 'plot-wrap' }, love);
  const table = el('table', { class: 'columns balance', 'data-testid': 'balance-table' });
  const overlap = el('canvas', { 'data-testid': 'overlap-plot', role: 'img', 'aria-label': 'Overlap plot: logit score by group, before and after matching' });
  const overlapDesign = el('select', { 'aria-label': 'Design of the overlap plot and term shift', 'data-testid': 'overlap-design' }, ran.map((n) => el('option', { value: n, text: n })));
  overlapDesign.value = store.compare[0] ?? ran[0];
  const terms = el('div', { class: 'term-shift', 'data-testid': 'term-shift' });
  let sort = { key: 'before', dir: -1 };

  async function drawLove() {
    if (!store.compare.length) {
      love.width = love.width; // clears
      return;
    }
    try {
      const n = store.runs.get(store.compare[0]).balance.length;
      const height = await plain('love_height', { terms: n });
      const width = Math.max(640, Math.min(1000, loveWrap.clientWidth || 900));
      const picture = await withSession('Drawing the Love plot', 'session_draw_love', { width, height, designs: store.compare }, { needs: store.compare });
      showBitmap(love, picture);
    } catch (err) {
      if (err?.kind !== 'cancelled') showError(err, 'The Love plot could not be drawn');
    }
  }

  async function drawOverlap() {
    try {
      const name = overlapDesign.value;
      const width = Math.max(640, Math.min(1000, loveWrap.clientWidth || 900));
      const picture = await withSession('Drawing the overlap plot', 'session_draw_overlap', { width, height: 320, name }, { needs: [name] });
      showBitmap(overlap, picture);
    } catch (err) {
      if (err?.kind !== 'cancelled') showError(err, 'The overlap plot could not be drawn');
    }
    drawTerms();
  }

  function drawTable() {
    const runs = store.compare.map((n) => store.runs.get(n));
    if (!runs.length) {
      replaceChildren(table);
      return;
    }
    const base = runs[0].balance;
    const value = (row, i, key) => {
      if (key === 'term') return row.term;
      if (key === 'before') return Math.abs(row.smd_before ?? NaN);
      const [k, field] = key.split(':');
      return Math.abs(runs[Number(k)].balance[i]?.[field] ?? NaN);
    };
    const order = base.map((_, i) => i);
    order.sort((a, b) => {
      const [x, y] = [value(base[a], a, sort.key), value(base[b], b, sort.key)];
      if (typeof x === 'string') return sort.dir * x.localeCompare(y);
      const nx = Number.isNaN(x) ? -Infinity : x;
      const ny = Number.isNaN(y) ? -Infinity : y;
      return sort.dir * (nx - ny) || a - b;
    });
    const header = (label, key, attrs = {}) => {
      const active = sort.key === key;
      const button = el('button', { type: 'button', class: 'sort', text: label + (active ? (sort.dir < 0 ? ' ▼' : ' ▲') : '') });
      button.addEventListener('click', () => {
        sort = { key, dir: active ? -sort.dir : key === 'term' ? 1 : -1 };
        drawTable();
      });
      return el('th', { scope: 'col', 'aria-sort': active ? (sort.dir < 0 ? 'descending' : 'ascending') : null, ...attrs }, button);
    };
    const fmt = (v, digits = 3) => (v === null || v === undefined || !Number.isFinite(v) ? '—' : v.toFixed(digits));
    // An SMD the core could not define (no spread in the unmatched sample)
    // reads NA, as in balance.csv: a dash would look like "not computed".
    const smd = (v) => {
      if (v === null || v === undefined) {
        return el('td', { class: 'num muted', text: 'NA', title: 'undefined: this term does not vary in the unmatched sample' });
      }
      const text = fmt(v);
      const over = v !== null && v !== undefined && Math.abs(v) > 0.1;
      return el('td', { class: `num ${over ? 'over' : ''}`, text: over ? `${text} ▲` : text, title: over ? '|SMD| above 0.1' : null });
    };
    const groupRow = el(
      'tr',
      {},
      el('th', { colspan: '2', scope: 'colgroup', text: '' }),
      el('th', { colspan: '3', scope: 'colgroup', class: 'group-head', text: 'Before matching' }),
      runs.map((r) => el('th', { colspan: '3', scope: 'colgroup', class: 'group-head', text: `After: ${r.design.name}` })),
    );
    const headRow = el(
      'tr',
      {},
      header('Term', 'term'),
      el('th', { scope: 'col', text: 'From' }),
      header('SMD', 'before', { class: 'num' }),
      el('th', { scope: 'col', class: 'num', text: 'Var. ratio' }),
      el('th', { scope: 'col', class: 'num', text: 'KS' }),
      runs.flatMap((r, k) => [
        header('SMD', `${k}:smd_after`, { class: 'num' }),
        el('th', { scope: 'col', class: 'num', text: 'Var. ratio' }),
        el('th', { scope: 'col', class: 'num', text: 'KS' }),
      ]),
    );
    const rows = order.map((i) => {
      const b = base[i];
      const fromNote = b.kind === 'note' || b.kind === 'concept';
      return el(
        'tr',
        { 'data-testid': 'balance-row', 'data-term': b.term, 'data-kind': b.kind, 'data-note': String(fromNote), class: fromNote ? 'is-note' : '' },
        el('th', { scope: 'row', class: 'column-name', text: b.term }),
        el('td', {}, fromNote ? el('span', { class: 'tag tag-note', text: 'note' }) : el('span', { class: 'tag', text: 'record' })),
        smd(b.smd_before),
        el('td', { class: 'num', text: fmt(b.variance_ratio_before, 2) }),
        el('td', { class: 'num', text: fmt(b.ks_before) }),
        runs.flatMap((r) => {
          const a = r.balance[i] ?? {};
          return [smd(a.smd_after), el('td', { class: 'num', text: fmt(a.variance_ratio_after, 2) }), el('td', { class: 'num', text: fmt(a.ks_after) })];
        }),
      );
    });
    replaceChildren(
      table,
      el('caption', {
        text:
          'Standardized mean difference (treated minus comparison, over the pooled SD of the unmatched sample, the same ' +
          'denominator before and after; Austin 2009), variance ratio (treated over comparison) and Kolmogorov-Smirnov ' +
          'distance. ▲ marks |SMD| above 0.1. Rows marked “note” are computed from the notes. Sort with the column buttons.',
      }),
      el('thead', {}, groupRow, headRow),
      el('tbody', {}, rows),
    );
  }

  function drawTerms() {
    const r = store.runs.get(overlapDesign.value);
    const ts = r?.term_shift;
    if (!ts) {
      replaceChildren(terms, el('p', { class: 'muted', text: 'No notes, so no term shift.' }));
      return;
    }
    const top = ts.rows.slice(0, 15);
    const fmt = (v) => (Number.isFinite(v) ? v.toFixed(2) : '—');
    replaceChildren(
      terms,
      el(
        'table',
        { class: 'columns' },
        el('caption', {
          text:
            'Words most over-represented in one group: log-odds ratio with an informative Dirichlet prior and its z-score ' +
            '(Monroe, Colaresi & Quinn 2008). Positive leans to the treated group; after matching the z-scores should shrink.',
        }),
        el('thead', {}, el('tr', {}, ['Word', 'Count', 'z before', 'z after', 'Leans to (before)'].map((t) => el('th', { scope: 'col', text: t })))),
        el(
          'tbody',
          {},
          top.map((row) =>
            el(
              'tr',
              { 'data-testid': 'term-row' },
              el('th', { scope: 'row', class: 'column-name', text: row.term }),
              el('td', { class: 'num', text: String(Math.round(row.count)) }),
              el('td', { class: 'num', text: fmt(row.z_before) }),
              el('td', { class: 'num', text: fmt(row.z_after) }),
              el('td', { text: row.z_before > 0 ? 'treated' : 'comparison' }),
            ),
          ),
        ),
      ),
    );
  }

  overlapDesign.addEventListener('change', drawOverlap);
  replaceChildren(
    screen,
    el('h1', { text: 'Balance' }),
    el('p', {
      class: 'lede',
      text: 'Are the matched groups alike? Each covariate’s standardized mean difference before matching and after, for each design.',
    }),
    picker,
    append(
      el('section', { class: 'panel' }),
      el('h2', { text: 'Love plot' }),
      el('p', {
        class: 'hint',
        text:
          'Absolute SMD per covariate: before matching, and after matching under each design (each design has its own colour ' +
          'and marker shape). The shaded band marks |SMD| up to 0.1, a common tolerance (Austin 2009).',
      }),
      loveWrap,
    ),
    append(el('section', { class: 'panel' }), el('h2', { text: 'Balance table' }), el('div', { class: 'table-wrap' }, table)),
    append(
      el('section', { class: 'panel' }),
      el('h2', { text: 'Overlap of the score' }),
      el('label', { class: 'field' }, el('span', { text: 'Design' }), overlapDesign),
      el('div', { class: 'plot-wrap' }, overlap),
      el('h2', { text: 'Term shift' }),
      terms,
    ),
  );
  drawTable();
  drawLove().then(drawOverlap);
}

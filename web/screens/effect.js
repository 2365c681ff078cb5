// The Effect step: per design and outcome, the unmatched and the matched
// estimate with interval, tests, p-values, method and counts; the Rosenbaum
// bounds at each Gamma with the sensitivity plot (drawn by the core in the
// engine's worker) and the E-value; the cautions beside them, not below
// the fold.

import { el, replaceChildren } from '../dom.js';
import { showError, clearError } from '../banner.js';
import { store } from '../store.js';
import { withSession, plain } from '../work.js';
import { showBitmap } from './balance.js';
import { saveFile as download } from '../saving.js';

/** A number to `digits` places, or a dash when it is not a finite number. */
export function fixed(v, digits = 3) {
  return typeof v === 'number' && Number.isFinite(v) ? v.toFixed(digits) : '—';
}

/** A p-value as readers expect it: small ones as "< 0.001". */
export function pText(p) {
  if (typeof p !== 'number' || !Number.isFinite(p)) return '—';
  return p < 0.001 ? '< 0.001' : p.toFixed(3);
}

/** "a to b", or a dash. */
export function interval(low, high, digits = 3) {
  return Number.isFinite(low) && Number.isFinite(high) ? `${fixed(low, digits)} to ${fixed(high, digits)}` : '—';
}

const percent = (level) => `${Math.round(100 * level)}%`;

function ranDesigns() {
  return (store.study?.designs ?? []).map((d) => d.name).filter((n) => store.runs.has(n));
}

/** The three cautions, each its own sentence, beside the estimates. */
export function cautionBox(extra = null) {
  return el(
    'aside',
    { class: 'caution effect-caution', 'data-testid': 'effect-caution', role: 'note' },
    el('p', {}, el('strong', { text: 'Read these estimates with care. ' }), 'Each estimate assumes no unmeasured confounding: the matched groups are taken to differ only in what was measured.'),
    el('p', { text: 'The sensitivity analysis bounds that doubt (how much hidden bias would overturn the result); it does not remove it.' }),
    el('p', { text: 'These results support study design. They need review by qualified people before anyone acts on them, and their use must follow local research-ethics and data-governance rules.' }),
    extra,
  );
}

function estimateRow(label, e) {
  return el(
    'tr',
    { 'data-testid': `estimate-${label}` },
    el('th', { scope: 'row', text: label }),
    el('td', { class: 'num', text: fixed(e.estimate) }),
    el('td', { class: 'num', text: interval(e.ci_low, e.ci_high) }),
    el('td', { class: 'num', text: pText(e.p_value) }),
    el('td', { class: 'test-name', text: e.test || '—' }),
    el('td', { class: 'num', text: e.n_sets ? String(e.n_sets) : '—' }),
    el('td', { class: 'num', text: String(e.n_treated) }),
    el('td', { class: 'num', text: String(e.n_comparison_units) }),
  );
}

function estimateTable(o) {
  const m = o.matched;
  return el(
    'div',
    { class: 'table-wrap' },
    el(
      'table',
      { class: 'columns estimates', 'data-testid': 'estimate-table' },
      el('caption', { text: `${m.measure}, treated minus comparison, with ${percent(m.level)} confidence interval` }),
      el(
        'thead',
        {},
        el(
          'tr',
          {},
          el('th', { scope: 'col', text: 'Sample' }),
          el('th', { scope: 'col', class: 'num', text: 'Estimate' }),
          el('th', { scope: 'col', class: 'num', text: `${percent(m.level)} interval` }),
          el('th', { scope: 'col', class: 'num', text: 'p-value' }),
          el('th', { scope: 'col', text: 'Test' }),
          el('th', { scope: 'col', class: 'num', text: 'Sets' }),
          el('th', { scope: 'col', class: 'num', text: 'Treated' }),
          el('th', { scope: 'col', class: 'num', text: 'Comparison' }),
        ),
      ),
      el('tbody', {}, estimateRow('unmatched', o.unmatched), estimateRow('matched', m)),
    ),
  );
}

function details(o) {
  const m = o.matched;
  const items = [
    el('li', { text: `Interval on the matched sample: ${m.method}.` }),
    el('li', { text: `Means: treated ${fixed(m.mean_treated)}, comparison ${fixed(m.mean_comparison)}.` }),
  ];
  if (m.risk_ratio) {
    items.push(el('li', { 'data-testid': 'risk-ratio', text: `Risk ratio, matched: ${fixed(m.risk_ratio.estimate)} (${interval(m.risk_ratio.ci_low, m.risk_ratio.ci_high)}).` }));
  }
  if (m.pair_counts) {
    const c = m.pair_counts;
    items.push(el('li', { text: `Pairs: both with the event ${c.both}, treated only ${c.treated_only}, comparison only ${c.comparison_only}, neither ${c.neither}.` }));
  }
  for (const t of m.tests ?? []) {
    items.push(el('li', { 'data-testid': 'test-result', text: `${t.name}: statistic ${fixed(t.statistic)}, two-sided p ${pText(t.p_value)}.` }));
  }
  if (m.bootstrap) items.push(el('li', { text: `Bootstrap over matched sets: ${m.bootstrap} resamples, seed ${m.seed}.` }));
  if (o.missing_outcome_units) items.push(el('li', { text: `${o.missing_outcome_units} units left out: outcome missing.` }));
  return el('ul', { class: 'effect-details' }, items);
}

function eValueText(ev) {
  return (
    `E-value (VanderWeele & Ding 2017): ${fixed(ev.e_point, 2)} for the estimate, ${fixed(ev.e_limit, 2)} for the interval limit nearer the null ` +
    `(${ev.scale} ${fixed(ev.risk_ratio)}). An unmeasured confounder would need a risk-ratio association this strong with both the treatment and the outcome ` +
    'to explain the estimate away.'
  );
}

function verdict(b) {
  if (!b.significant_without_bias) return `The one-sided test is not significant at ${b.alpha} even without hidden bias (Gamma 1); there is no finding for hidden bias to overturn.`;
  if (b.gamma_critical !== null && b.gamma_critical !== undefined) {
    return `Critical Gamma ${fixed(b.gamma_critical, 2)}: hidden bias that multiplies the odds of treatment within a matched pair by this much could make the result non-significant at ${b.alpha}.`;
  }
  const last = b.points[b.points.length - 1]?.gamma;
  return `The upper bound stays below ${b.alpha} up to Gamma ${fixed(last, 2)}, the end of the grid.`;
}

function boundsTable(b) {
  return el(
    'div',
    { class: 'table-wrap bounds-wrap' },
    el(
      'table',
      { class: 'columns bounds', 'data-testid': 'sensitivity-table' },
      el('caption', { text: 'Upper bound of the one-sided p-value at each Gamma' }),
      el('thead', {}, el('tr', {}, el('th', { scope: 'col', class: 'num', text: 'Gamma' }), el('th', { scope: 'col', class: 'num', text: 'Upper bound of p' }))),
      el(
        'tbody',
        {},
        (b.points ?? []).map((p) =>
          el(
            'tr',
            { class: p.p_upper > b.alpha ? 'over' : '' },
            el('td', { class: 'num', text: fixed(p.gamma, 2) }),
            el('td', { class: 'num', text: p.p_upper < 0.0001 ? '< 0.0001' : fixed(p.p_upper, 4) }),
          ),
        ),
      ),
    ),
  );
}

/** Draw the step into `screen`. */
export function mountEffect(screen) {
  const ran = ranDesigns();
  if (!ran.length) {
    replaceChildren(screen, el('h1', { text: 'Effect' }), el('p', { class: 'lede', text: 'Run at least one design on the Designs step first.' }), cautionBox());
    return;
  }
  const design = el('select', { 'aria-label': 'Design', 'data-testid': 'effect-design' }, ran.map((n) => el('option', { value: n, text: n })));
  design.value = store.compare.find((n) => ran.includes(n)) ?? ran[0];
  const body = el('div', { 'data-testid': 'effect-body' });
  design.addEventListener('change', () => draw());

  async function drawPlot(canvas, name, outcome) {
    try {
      const width = Math.max(560, Math.min(820, body.clientWidth - 40 || 720));
      const picture = await withSession('Drawing the sensitivity plot', 'session_draw_sensitivity', { width, height: 300, name, outcome }, { needs: [name] });
      showBitmap(canvas, picture);
    } catch (err) {
      if (err?.kind !== 'cancelled') showError(err, 'The sensitivity plot could not be drawn');
    }
  }

  function outcomePanel(name, o) {
    const section = el('section', { class: 'panel outcome', 'data-testid': 'outcome', 'data-outcome': o.name });
    section.append(
      el('h2', { text: `Outcome ${o.name}` }),
      el('p', { class: 'hint', text: `${o.kind} outcome; ${o.matched.measure} on the matched sample (effect on the treated), beside the unmatched comparison.` }),
      estimateTable(o),
      details(o),
    );
    const b = o.sensitivity;
    if (b) {
      const canvas = el('canvas', {
        'data-testid': 'sensitivity-plot',
        role: 'img',
        'aria-label': `Sensitivity plot of ${o.name}: upper bound of the one-sided p-value against Gamma`,
      });
      const svgButton = el('button', { type: 'button', class: 'button button-quiet', text: 'Sensitivity plot (SVG)', 'data-testid': 'export-sensitivity-svg' });
      svgButton.addEventListener('click', async () => {
        clearError();
        try {
          const svg = await withSession('Drawing the sensitivity plot', 'session_sensitivity_svg', { name, outcome: o.name, width: 720, height: 320 }, { needs: [name] });
          download(`${name}-${o.name}-sensitivity.svg`, svg, 'image/svg+xml');
        } catch (err) {
          if (err?.kind !== 'cancelled') showError(err, 'The sensitivity plot could not be written');
        }
      });
      section.append(
        el('h3', { text: 'Sensitivity to hidden bias' }),
        el('p', { text: `Rosenbaum bounds (Rosenbaum 2002) on ${b.test}, direction ${b.direction}, ${b.n_used} pairs used.` }),
        el('p', { class: 'verdict', 'data-testid': 'gamma-critical', text: verdict(b) }),
        el('div', { class: 'sensitivity-grid' }, el('div', { class: 'plot-wrap' }, canvas), boundsTable(b)),
        el('div', { class: 'field-row' }, svgButton),
      );
      drawPlot(canvas, name, o.name);
    }
    if (o.e_value) section.append(el('p', { 'data-testid': 'e-value', text: eValueText(o.e_value) }));
    for (const n of o.notes ?? []) section.append(el('p', { class: 'hint', text: n }));
    section.append(
      el('p', {
        class: 'caution-inline',
        'data-testid': 'outcome-caution',
        text: 'Caution: this estimate holds only if no unmeasured confounder differs between the matched groups; the bounds above say how much it would take, not that there is none. Qualified review and local research-ethics and data-governance rules apply before any use.',
      }),
    );
    return section;
  }

  function draw() {
    const name = design.value;
    const run = store.runs.get(name);
    const s = run.summary;
    const d = run.design;
    replaceChildren(
      body,
      el('p', {
        class: 'hint',
        'data-testid': 'effect-design-facts',
        text: `1:${d.controls} ${d.algorithm} matching${d.reuse ? ' with reuse' : ''}, ${d.caliper ? `caliper ${d.caliper} SD` : 'no caliper'}; ${s.matched_treated} of ${s.treated} treated matched with ${s.matched_comparison} comparison units.`,
      }),
      run.effects.length
        ? run.effects.map((o) => outcomePanel(name, o))
        : el('p', { class: 'lede', text: 'The study names no outcome; give a column the outcome role on the Data step to see effects.' }),
    );
  }

  replaceChildren(
    screen,
    el('h1', { text: 'Effect' }),
    el('p', {
      class: 'lede',
      text: 'The effect on the treated, estimated on the matched sample with intervals that respect the matched sets, and how much hidden bias it would take to overturn it.',
    }),
    cautionBox(),
    el('label', { class: 'field' }, el('span', { text: 'Design' }), design),
    body,
  );
  draw();
  plain('effect_caution', {}).then(
    (text) => screen.querySelector('[data-testid="effect-caution"]')?.setAttribute('title', text),
    () => {},
  );
}

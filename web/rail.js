// The step rail: where the user is in a study, and what comes next. Built
// steps are buttons; steps not built yet are shown muted with "coming" and
// are not interactive, so nothing on the rail promises what the page cannot do.

import { el, replaceChildren } from './dom.js';

/** The steps of a study, in the order the data flows through them. */
export const STEPS = [
  { id: 'data', label: 'Data', built: true },
  { id: 'notes', label: 'Note features', built: true },
  { id: 'designs', label: 'Designs', built: true },
  { id: 'balance', label: 'Balance', built: true },
  { id: 'pairs', label: 'Side by side', built: true },
  { id: 'review', label: 'Review', built: true },
  { id: 'effect', label: 'Effect', built: true },
  { id: 'export', label: 'Export', built: true },
];

/** Draw the rail into `nav`, marking `current`; `onChoose(step)` on a click. */
export function mountRail(nav, current, onChoose = () => {}) {
  const items = STEPS.map((step, i) => {
    const inner = [
      el('span', { class: 'rail-number', 'aria-hidden': 'true', text: String(i + 1) }),
      el('span', { class: 'rail-label', text: step.label }),
      step.built ? null : el('span', { class: 'rail-soon', title: 'Not built yet', text: 'coming' }),
    ];
    const body = step.built
      ? el('button', { type: 'button', class: 'rail-button', 'data-step': step.id, 'aria-current': step.id === current ? 'step' : null, onclick: () => onChoose(step.id) }, inner)
      : el('span', { class: 'rail-button' }, inner);
    return el(
      'li',
      {
        class: `rail-step${step.id === current ? ' is-current' : ''}${step.built ? '' : ' is-coming'}`,
        'data-step': step.id,
      },
      body,
    );
  });
  replaceChildren(nav, el('ol', { class: 'rail-steps' }, items));
}

// The step rail: where the user is in a study, and what comes next. Steps
// that are not built yet are shown muted with "coming", and are not
// interactive, so nothing on the rail promises what the page cannot do.

import { el, replaceChildren } from './dom.js';

/** The steps of a study, in the order the data flows through them. */
export const STEPS = [
  { id: 'data', label: 'Data', built: true },
  { id: 'notes', label: 'Note features', built: false },
  { id: 'designs', label: 'Designs', built: false },
  { id: 'balance', label: 'Balance', built: false },
  { id: 'pairs', label: 'Side by side', built: false },
  { id: 'review', label: 'Review', built: false },
  { id: 'effect', label: 'Effect', built: false },
  { id: 'export', label: 'Export', built: false },
];

/** Draw the rail into `nav`, marking `current` as the step on screen. */
export function mountRail(nav, current) {
  const items = STEPS.map((step, i) =>
    el(
      'li',
      {
        class: `rail-step${step.id === current ? ' is-current' : ''}${step.built ? '' : ' is-coming'}`,
        'data-step': step.id,
        'aria-current': step.id === current ? 'step' : null,
      },
      el('span', { class: 'rail-number', 'aria-hidden': 'true', text: String(i + 1) }),
      el('span', { class: 'rail-label', text: step.label }),
      step.built ? null : el('span', { class: 'rail-soon', title: 'Not built yet', text: 'coming' }),
    ),
  );
  replaceChildren(nav, el('ol', { class: 'rail-steps' }, items));
}

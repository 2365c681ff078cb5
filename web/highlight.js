// A note with its concept mentions marked. The note is data: it becomes
// text nodes, and each mention a <mark> element around a text node; never
// markup. Affirmed and negated mentions differ in more than colour: affirmed
// ones are underlined solid, negated ones struck through with a dashed
// frame, and each mark says which in its title and a hidden word for screen
// readers.

import { el } from './dom.js';

/**
 * The note `text` with `highlights` ({start, end, concept, negated}, in
 * UTF-16 code units, possibly overlapping) as a <p> of text and marks.
 */
export function markedNote(text, highlights, attrs = {}) {
  const p = el('p', { class: 'note-text', ...attrs });
  if (!text) {
    p.append(el('span', { class: 'muted', text: '(no note)' }));
    return p;
  }
  // Cut the note at every span boundary; each piece is covered by a set of
  // spans (or none).
  const cuts = new Set([0, text.length]);
  for (const h of highlights) {
    cuts.add(Math.max(0, Math.min(text.length, h.start)));
    cuts.add(Math.max(0, Math.min(text.length, h.end)));
  }
  const points = [...cuts].sort((a, b) => a - b);
  for (let i = 0; i + 1 < points.length; i += 1) {
    const [a, b] = [points[i], points[i + 1]];
    const piece = text.slice(a, b);
    const covering = highlights.filter((h) => h.start <= a && h.end >= b);
    if (!covering.length) {
      p.append(document.createTextNode(piece));
      continue;
    }
    // A piece inside an affirmed mention of any concept reads as affirmed.
    const negated = covering.every((h) => h.negated);
    const concepts = [...new Set(covering.map((h) => h.concept))].join(', ');
    const how = negated ? 'negated' : 'affirmed';
    p.append(
      el(
        'mark',
        {
          class: `mention is-${how}`,
          title: `${concepts}: ${how} mention`,
          'data-concept': concepts,
          'data-negated': String(negated),
        },
        piece,
        el('span', { class: 'visually-hidden', text: ` (${concepts}, ${how})` }),
      ),
    );
  }
  return p;
}

/** The legend that says how the two kinds of mention look. */
export function mentionLegend() {
  return el(
    'p',
    { class: 'legend', 'data-testid': 'mention-legend' },
    el('span', { class: 'legend-title', text: 'Concept mentions: ' }),
    el('mark', { class: 'mention is-affirmed', text: 'affirmed' }),
    ' solid underline, counted in concept.<name>; ',
    el('mark', { class: 'mention is-negated', text: 'negated' }),
    ' struck through in a dashed frame (“denies falls”, “no …”), counted in concept.<name>.negated.',
  );
}

// The Note features step: concepts (named term lists, with or without
// negation), how notes become tokens, a preview of notes with their
// mentions marked, and each note feature's distribution in the two groups.

import { el, append, replaceChildren, formatCount, formatFixed } from '../dom.js';
import { showError, clearError } from '../banner.js';
import { store, changed, saveStudy } from '../store.js';
import { prepare, withSession } from '../work.js';
import { markedNote, mentionLegend } from '../highlight.js';

const PREVIEW_COUNT = 6;

/** Draw the step into `screen`. */
export function mountNotes(screen) {
  if (!store.study) {
    replaceChildren(screen, el('h1', { text: 'Note features' }), el('p', { class: 'lede', text: 'Open a cohort on the Data step first.' }));
    return;
  }
  if (!store.study.columns.notes) {
    replaceChildren(
      screen,
      el('h1', { text: 'Note features' }),
      el('p', { class: 'lede', text: 'No column has the role “note”. Give the free-text column that role on the Data step to use notes.' }),
    );
    return;
  }
  const concepts = el('div', { class: 'concepts', 'data-testid': 'concept-list' });
  const options = el('fieldset', { class: 'note-options' });
  const apply = el('button', { type: 'button', class: 'button', 'data-testid': 'apply-concepts', text: 'Apply and recompute the note features' });
  const dirty = el('span', { class: 'dirty-mark', 'data-testid': 'concepts-dirty', hidden: true, text: 'Edited: apply to see the effect.' });
  const preview = el('div', { class: 'preview', 'data-testid': 'note-preview' });
  const spread = el('div', { class: 'table-wrap', 'data-testid': 'feature-spread' });
  let offset = 0;
  const onlyMentions = el('input', { type: 'checkbox', checked: '' });
  onlyMentions.checked = true;

  const markDirty = () => {
    dirty.hidden = false;
    saveStudy();
  };

  function drawConcepts() {
    replaceChildren(concepts, store.study.concepts.map((c, i) => conceptCard(c, i)));
  }

  function conceptCard(c, i) {
    const name = el('input', { type: 'text', value: c.name, 'aria-label': `Name of concept ${i + 1}`, 'data-testid': 'concept-name', spellcheck: 'false' });
    const terms = el('textarea', { rows: String(Math.max(3, c.terms.length + 1)), 'aria-label': `Terms of concept ${i + 1}, one per line`, 'data-testid': 'concept-terms' });
    terms.value = c.terms.join('\n');
    const neg = el('input', { type: 'checkbox', 'data-testid': 'concept-negation' });
    neg.checked = c.negation !== false;
    const remove = el('button', { type: 'button', class: 'button button-quiet', text: 'Remove', 'aria-label': `Remove concept ${c.name}` });
    name.addEventListener('input', () => {
      c.name = name.value.trim();
      markDirty();
    });
    terms.addEventListener('input', () => {
      c.terms = terms.value.split('\n').map((t) => t.trim()).filter(Boolean);
      markDirty();
    });
    neg.addEventListener('change', () => {
      c.negation = neg.checked;
      markDirty();
    });
    remove.addEventListener('click', () => {
      store.study.concepts.splice(i, 1);
      markDirty();
      drawConcepts();
    });
    return el(
      'div',
      { class: 'concept-card', 'data-testid': 'concept-card' },
      el('label', { class: 'field' }, el('span', { text: 'Name' }), name),
      el('label', { class: 'field grow' }, el('span', { text: 'Terms and phrases, one per line' }), terms),
      el('label', { class: 'check' }, neg, el('span', { text: 'Negation: count “denies …”, “no …” apart' })),
      remove,
    );
  }

  function drawOptions() {
    const o = store.study.note_options;
    const box = (key, text) => {
      const input = el('input', { type: 'checkbox' });
      input.checked = Boolean(o[key]);
      input.addEventListener('change', () => {
        o[key] = input.checked;
        markDirty();
      });
      return el('label', { class: 'check' }, input, el('span', { text }));
    };
    const number = (key, text, min, max) => {
      const input = el('input', { type: 'number', min: String(min), max: String(max), step: '1', value: String(o[key]) });
      input.addEventListener('change', () => {
        const v = Math.round(Number(input.value));
        if (Number.isFinite(v) && v >= min && v <= max) o[key] = v;
        else input.value = String(o[key]);
        markDirty();
      });
      return el('label', { class: 'field small' }, el('span', { text }), input);
    };
    replaceChildren(
      options,
      el('legend', { text: 'How notes become words' }),
      box('single_char_tokens', 'keep one-letter words'),
      box('stop_words', 'drop common words'),
      box('stem', 'reduce words to their stem'),
      box('bigrams', 'add pairs of adjacent words'),
      number('latent_dims', 'Latent dimensions', 0, 500),
      number('seed', 'Seed', 0, 2 ** 31),
    );
  }

  async function drawPreview() {
    try {
      const notes = await withSession('Finding mentions', 'session_preview', {
        offset,
        count: PREVIEW_COUNT,
        mentionsOnly: onlyMentions.checked,
      });
      replaceChildren(
        preview,
        notes.length
          ? notes.map((n) =>
              el(
                'article',
                { class: 'preview-note', 'data-testid': 'preview-note' },
                el('p', { class: 'note-head', text: `${n.id} · ${n.treated ? 'treated' : 'comparison'} · ${n.highlights.length} mention${n.highlights.length === 1 ? '' : 's'}` }),
                markedNote(n.note, n.highlights),
              ),
            )
          : el('p', { class: 'muted', text: 'No more notes to show.' }),
      );
    } catch (err) {
      if (err?.kind !== 'cancelled') showError(err, 'The preview could not be made', 'Check the concepts above, then apply them again.');
    }
  }

  function drawSpread() {
    const p = store.prepared;
    if (!p) {
      replaceChildren(spread, el('p', { class: 'muted', text: 'Apply the concepts to compute the note features.' }));
      return;
    }
    const fmt = (v) => (Number.isFinite(v) ? formatFixed(v, Math.abs(v) >= 100 ? 0 : 2) : '—');
    const rows = p.note_features.map((f) =>
      el(
        'tr',
        { 'data-feature': f.name },
        el('th', { scope: 'row', class: 'column-name feature-name', text: f.name }),
        el('td', { text: f.kind === 'concept' ? 'concept' : 'note measure' }),
        el('td', { class: 'num', text: fmt(f.treated.mean) }),
        el('td', { class: 'num', text: fmt(f.comparison.mean) }),
        el('td', {}, shareBars(f)),
        // Treated above comparison, as in the share column, so the table
        // fits the panel without scrolling sideways.
        el(
          'td',
          { class: 'num five' },
          el('span', { class: 'five-row', text: `T ${f.treated.five.map(fmt).join(' · ')}` }),
          el('span', { class: 'five-row', text: `C ${f.comparison.five.map(fmt).join(' · ')}` }),
        ),
      ),
    );
    replaceChildren(
      spread,
      el(
        'table',
        { class: 'columns' },
        el('caption', {
          text: `Note features of ${formatCount(p.rows_used)} notes by group. Share: notes where the feature is not zero. ` +
            'Five numbers: minimum, lower quartile, median, upper quartile, maximum.',
        }),
        el(
          'thead',
          {},
          el(
            'tr',
            {},
            ['Feature', 'Source', 'Mean, treated', 'Mean, comparison', 'Share not zero (T above, C below)', 'Five numbers (T above, C below)'].map((t) =>
              el('th', { scope: 'col', text: t }),
            ),
          ),
        ),
        el('tbody', {}, rows),
      ),
    );
  }

  apply.addEventListener('click', async () => {
    clearError();
    try {
      await prepare();
      dirty.hidden = true;
      offset = 0;
      drawSpread();
      await drawPreview();
    } catch (err) {
      if (err?.kind !== 'cancelled') showError(err, 'The concepts need a fix', 'Correct the concept named in the message and apply again.');
    }
  });
  const add = el('button', { type: 'button', class: 'button button-quiet', 'data-testid': 'add-concept', text: 'Add a concept' });
  add.addEventListener('click', () => {
    let k = store.study.concepts.length + 1;
    while (store.study.concepts.some((c) => c.name === `concept_${k}`)) k += 1;
    store.study.concepts.push({ name: `concept_${k}`, terms: ['type a term'], negation: true });
    markDirty();
    drawConcepts();
  });
  const more = el('button', { type: 'button', class: 'button button-quiet', text: 'Next notes' });
  more.addEventListener('click', () => {
    offset += PREVIEW_COUNT;
    drawPreview();
  });
  onlyMentions.addEventListener('change', () => {
    offset = 0;
    drawPreview();
  });

  drawConcepts();
  drawOptions();
  replaceChildren(
    screen,
    el('h1', { text: 'Note features' }),
    el('p', {
      class: 'lede',
      text:
        'A concept is a list of words and phrases looked for in every note (any letter case; line breaks count as spaces). ' +
        'Each concept becomes two covariates: its affirmed mentions and, with negation on, its negated ones. ' +
        'Length, readability, word variety and latent dimensions of the notes are computed too.',
    }),
    el('section', { class: 'panel' }, el('h2', { text: 'Concepts' }), concepts, el('div', { class: 'field-row' }, add, apply, dirty)),
    el('section', { class: 'panel' }, options),
    el(
      'section',
      { class: 'panel' },
      el('h2', { text: 'Notes with their mentions' }),
      mentionLegend(),
      el('div', { class: 'field-row' }, el('label', { class: 'check' }, onlyMentions, el('span', { text: 'only notes with a mention' })), more),
      preview,
    ),
    el('section', { class: 'panel' }, el('h2', { text: 'Distribution by group' }), spread),
  );
  drawSpread();
  if (store.prepared) drawPreview();
  else apply.click();
}

function shareBars(f) {
  const bar = (share, label, cls) => {
    const pct = Number.isFinite(share) ? Math.round(share * 100) : 0;
    return el(
      'span',
      { class: 'share-row' },
      el('span', { class: 'share-label', text: label }),
      el('meter', { class: `share-meter ${cls}`, min: '0', max: '1', value: String(Number.isFinite(share) ? share : 0), 'aria-label': `${label}: ${pct}%` }),
      el('span', { class: 'share-value', text: `${pct}%` }),
    );
  };
  return append(el('span', { class: 'shares' }), bar(f.treated.nonzero, 'T', 'is-treated'), bar(f.comparison.nonzero, 'C', 'is-comparison'));
}

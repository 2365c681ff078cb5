// The Export step: the files of a design (the same bytes the command line
// writes), the Love plot as SVG and PNG, the study file; and importing a
// study file to restore a session.

import { el, replaceChildren } from '../dom.js';
import { showError, clearError, showNotice } from '../banner.js';
import { store, changed, saveStudy, normalizeStudy, studyForCore } from '../store.js';
import { withSession, plain } from '../work.js';
import { review, reviewUpload, reviewExported } from './review.js';
import { saveFile as download } from '../saving.js';

/**
 * A study file's text. TOML files are UTF-8 (TOML v1.0.0); `File.text()`
 * would turn other bytes into U+FFFD silently and import a study whose
 * names no longer match the cohort's, so they are refused, as the command
 * line refuses them.
 */
export function readUtf8(buffer, name) {
  try {
    return new TextDecoder('utf-8', { fatal: true }).decode(buffer);
  } catch {
    const message = `${name} is not UTF-8 text; save the study file as UTF-8 and import it again`;
    throw { kind: 'study', message, detail: message, row: null, column: null, key: null };
  }
}

/** Draw the step into `screen`. */
export function mountExport(screen, go) {
  const ran = (store.study?.designs ?? []).map((d) => d.name).filter((n) => store.runs.has(n));
  const design = el('select', { 'aria-label': 'Design to export', 'data-testid': 'export-design' }, ran.map((n) => el('option', { value: n, text: n })));
  if (ran.length) design.value = ran[0];

  const fileButton = (label, file, testId, type) => {
    const b = el('button', { type: 'button', class: 'button button-quiet', text: label, 'data-testid': testId, disabled: !ran.length });
    b.addEventListener('click', async () => {
      clearError();
      try {
        const files = await withSession('Writing the files', 'session_files', { name: design.value }, { needs: [design.value] });
        const f = files.find((x) => x.name === file);
        if (!f) throw { kind: 'param', message: `This design has no ${file}.` };
        download(`${design.value}-${file}`, f.contents, type);
      } catch (err) {
        if (err?.kind !== 'cancelled') showError(err, `${file} could not be written`);
      }
    });
    return b;
  };

  const compared = () => (store.compare.length ? store.compare.filter((n) => store.runs.has(n)) : ran.slice(0, 1));
  const loveSvg = el('button', { type: 'button', class: 'button button-quiet', text: 'Love plot (SVG)', 'data-testid': 'export-love-svg', disabled: !ran.length });
  loveSvg.addEventListener('click', async () => {
    clearError();
    try {
      const names = compared();
      const height = await plain('love_height', { terms: store.runs.get(names[0]).balance.length });
      const svg = await withSession('Drawing the Love plot', 'session_love_svg', { designs: names, width: 900, height }, { needs: names });
      download('love-plot.svg', svg, 'image/svg+xml');
    } catch (err) {
      if (err?.kind !== 'cancelled') showError(err, 'The Love plot could not be written');
    }
  });
  const lovePng = el('button', { type: 'button', class: 'button button-quiet', text: 'Love plot (PNG)', 'data-testid': 'export-love-png', disabled: !ran.length });
  lovePng.addEventListener('click', async () => {
    clearError();
    try {
      const names = compared();
      const height = await plain('love_height', { terms: store.runs.get(names[0]).balance.length });
      const picture = await withSession('Drawing the Love plot', 'session_draw_love', { width: 900, height, designs: names }, { needs: names });
      const canvas = el('canvas', { width: String(picture.width), height: String(picture.height) });
      canvas.getContext('2d').drawImage(picture.bitmap, 0, 0);
      picture.bitmap.close();
      const blob = await new Promise((resolve) => canvas.toBlob(resolve, 'image/png'));
      download('love-plot.png', blob, 'image/png');
    } catch (err) {
      if (err?.kind !== 'cancelled') showError(err, 'The Love plot could not be written');
    }
  });
  const studyFile = el('button', { type: 'button', class: 'button', text: 'Study file (.study.toml)', 'data-testid': 'export-study', disabled: !store.study });
  studyFile.addEventListener('click', async () => {
    clearError();
    try {
      const text = await plain('study_to_toml', { study: studyForCore() });
      download('pairsight.study.toml', text, 'application/toml');
    } catch (err) {
      showError(err, 'The study file could not be written', 'Fix the setting named in the message, then export again.');
    }
  });

  const importInput = el('input', { type: 'file', accept: '.toml,text/plain', class: 'visually-hidden', 'data-testid': 'import-study' });
  const importLabel = el('label', { class: 'button button-quiet' }, 'Import a study file…', importInput);
  importInput.addEventListener('change', async () => {
    const file = importInput.files?.[0];
    importInput.value = '';
    if (!file) return;
    clearError();
    try {
      const text = readUtf8(await file.arrayBuffer(), file.name);
      const study = await plain('study_from_toml', { text });
      if (!store.file) {
        showError({ kind: 'param', message: 'Open the cohort file on the Data step first; the study file holds settings, not data.' }, 'No cohort is open');
        return;
      }
      store.study = normalizeStudy(study);
      store.prepared = null;
      store.runs.clear();
      store.compare = [];
      saveStudy();
      changed('study');
      showNotice(`Study file “${file.name}” imported: ${study.designs?.length ?? 0} designs, ${study.concepts?.length ?? 0} concepts. Run the designs to see their results.`);
      go?.('designs');
    } catch (err) {
      showError(err, `The study file “${file.name}” could not be read`, 'Correct the line or key named above and import it again.');
    }
  });

  const includeNotes = el('input', { type: 'checkbox', 'data-testid': 'report-notes' });
  const reportButton = el('button', { type: 'button', class: 'button', text: 'Report (HTML)', 'data-testid': 'export-report', disabled: !ran.length });
  reportButton.addEventListener('click', async () => {
    clearError();
    try {
      const names = ran;
      let studyText = null;
      try {
        studyText = await plain('study_to_toml', { study: studyForCore() });
      } catch {
        studyText = null; // the core writes the study out from the analysis
      }
      const request = {
        designs: names,
        title: 'pairsight report',
        include_notes: includeNotes.checked,
        example_pairs: 3,
        data_name: store.file?.name ?? null,
        study_text: studyText,
        review: reviewUpload(),
      };
      const html = await withSession('Writing the report', 'session_report', { request }, { needs: names });
      download('pairsight-report.html', html, 'text/html');
      if (request.review) reviewExported();
    } catch (err) {
      if (err?.kind !== 'cancelled') showError(err, 'The report could not be written');
    }
  });

  replaceChildren(
    screen,
    el('h1', { text: 'Export' }),
    el('p', {
      class: 'lede',
      text:
        'Save what you built. The files are made here and saved by your browser; they contain patient ids and values, so store ' +
        'them under your local data-governance rules.',
    }),
    el(
      'section',
      { class: 'panel' },
      el('h2', { text: 'A design’s files' }),
      ran.length ? el('label', { class: 'field' }, el('span', { text: 'Design' }), design) : el('p', { class: 'muted', text: 'Run a design first.' }),
      el(
        'div',
        { class: 'field-row' },
        fileButton('Matched data (CSV)', 'matched.csv', 'export-matched', 'text/csv'),
        fileButton('Balance table (CSV)', 'balance.csv', 'export-balance', 'text/csv'),
        fileButton('Scores (CSV)', 'score.csv', 'export-score', 'text/csv'),
        fileButton('Effect (JSON)', 'effect.json', 'export-effect', 'application/json'),
      ),
      el('p', { class: 'hint', text: 'Matched data: one row per matched unit with its set, id, group (1 = treated), weight and distance; the same bytes as pairsight match writes.' }),
    ),
    el(
      'section',
      { class: 'panel', 'data-testid': 'report-panel' },
      el('h2', { text: 'Report' }),
      el('p', {
        class: 'hint',
        text:
          'One self-contained HTML file for collaborators: data description (counts, not records), every run design, balance, plots, term shift, ' +
          (review.merged?.results ? 'the expert review of this visit, ' : '') +
          'effect and sensitivity, cautions and the study file. It opens from disk and makes no network request.',
      }),
      el('label', { class: 'check' }, includeNotes, el('span', { text: 'Include a few example pairs’ notes (off by default: notes are protected health information; include them only where every reader may see them)' })),
      el('div', { class: 'field-row' }, reportButton),
    ),
    el('section', { class: 'panel' }, el('h2', { text: 'Love plot' }), el('p', { class: 'hint', text: 'The designs compared on the Balance step.' }), el('div', { class: 'field-row' }, loveSvg, lovePng)),
    el(
      'section',
      { class: 'panel' },
      el('h2', { text: 'Study file' }),
      el('p', { class: 'hint', text: 'Roles, concepts, note options and designs as a TOML file: import it here or give it to pairsight match to re-create this study. It holds no data.' }),
      el('div', { class: 'field-row' }, studyFile, importLabel),
    ),
  );
}

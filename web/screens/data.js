// The Data step: open a cohort file (file picker or drag and drop anywhere on
// the page) and see what the core made of it: shape, encoding, delimiter, and
// each column's inferred kind and missing count.

import { el, append, replaceChildren, formatCount } from '../dom.js';
import { showError, clearError, showNotice, clearNotice } from '../banner.js';
import { store, changed, saveStudy, loadStudy, guessStudy, normalizeStudy } from '../store.js';
import { openCohort, prepare, plain } from '../work.js';
import { ROLES, roleOf, setRole } from '../roles.js';

const KIND_LABELS = {
  numeric: 'numeric',
  binary: 'binary',
  categorical: 'categorical',
  text: 'text',
};

const KIND_NOTES = {
  numeric: 'every value is a number',
  binary: 'every value is 0 or 1',
  categorical: 'a modest number of distinct labels',
  text: 'long or mostly distinct values, such as a note',
};

/**
 * Draw the data screen into `screen`. Returns `openBytes(name, bytes)` so
 * other parts of the page (the demo) can open a file the same way.
 */
export function mountData(screen, engine, onReady) {
  const input = el('input', {
    type: 'file',
    class: 'visually-hidden',
    accept: '.csv,.tsv,.txt,text/csv,text/tab-separated-values,text/plain',
    'data-testid': 'file-input',
  });
  const picker = el('label', { class: 'button' }, 'Choose a file…', input);
  const lead = el('p', { class: 'dropzone-lead', text: 'Drop a cohort file here' });
  const dropZone = el(
    'div',
    { class: 'dropzone', 'data-testid': 'drop-zone' },
    lead,
    el('p', { class: 'dropzone-or', text: 'or' }),
    picker,
    // The demo lives behind `#demo`; the button sets it (or replays it).
    el('button', {
      type: 'button',
      class: 'button button-quiet',
      'data-testid': 'open-demo',
      text: 'Open the invented demo cohort',
      onclick: () => {
        if (window.location.hash === '#demo') window.dispatchEvent(new HashChangeEvent('hashchange'));
        else window.location.hash = '#demo';
      },
    }),
    el('p', {
      class: 'dropzone-hint',
      text: 'A CSV with a header row; comma, semicolon or tab between values; UTF-8 or Latin-1.',
    }),
  );
  const status = el('p', { class: 'status', 'data-testid': 'data-status', 'aria-live': 'polite' });
  const summary = el('section', { class: 'summary', 'data-testid': 'summary', hidden: true });

  replaceChildren(
    screen,
    el('h1', { text: 'Data' }),
    el('p', {
      class: 'lede',
      text:
        'Open the cohort: one row per patient, one column per field. The file is read here, in this ' +
        'browser; it is not uploaded anywhere.',
    }),
    dropZone,
    status,
    summary,
  );

  input.addEventListener('change', () => {
    const file = input.files?.[0];
    // Clearing the value lets the same file be chosen again after a fix.
    input.value = '';
    if (!file) return;
    clearNotice();
    openFile(file);
  });
  listenForDrops(dropZone, (files) => {
    if (files.length > 1) showNotice(`${files.length} files were dropped; only “${files[0].name}” was opened.`);
    else clearNotice();
    openFile(files[0]);
  });

  // Only the latest file counts: a slow read finishing after a newer one
  // must not overwrite it.
  let latest = 0;

  // A picked or dropped file goes to the engine as it is: the worker reads
  // it in chunks, so the page never holds its bytes.
  function openFile(file) {
    return openSource(file.name, file);
  }

  /** Open bytes made in the page (the demo cohort) like a picked file. */
  function openBytes(name, bytes) {
    return openSource(name, new Blob([bytes]));
  }

  async function openSource(name, file) {
    const token = ++latest;
    clearError();
    summary.hidden = true;
    status.textContent = `Reading “${name}” (${formatBytes(file.size)})…`;
    try {
      const [result, markers] = await Promise.all([openCohort(name, file), missingMarkers(engine)]);
      if (token !== latest) return;
      status.textContent = '';
      store.file = { name, summary: result };
      const saved = loadStudy(result);
      store.study = normalizeStudy(saved ?? guessStudy(result));
      store.restored = Boolean(saved);
      changed('file');
      drawSummary(summary, name, result, markers);
      summary.append(rolesPanel(onReady));
      summary.hidden = false;
      dropZone.classList.add('is-compact');
      lead.textContent = 'Drop another cohort file here';
    } catch (err) {
      if (token !== latest) return;
      status.textContent = '';
      replaceChildren(summary);
      store.file = null;
      store.study = null;
      changed('file');
      showError(err, `Could not read “${name}”`);
    }
  }

  // Coming back to the step: show the open file again.
  if (store.file) {
    Promise.resolve(missingMarkers(engine)).then((markers) => {
      if (!store.file) return;
      drawSummary(summary, store.file.name, store.file.summary, markers);
      summary.append(rolesPanel(onReady));
      summary.hidden = false;
      dropZone.classList.add('is-compact');
      lead.textContent = 'Drop another cohort file here';
    });
  }

  return { openBytes };
}

let markersOnce = null;

/** The cell values the core counts as missing (asked once). */
function missingMarkers(engine) {
  markersOnce ??= engine.call('missing_markers').catch(() => null);
  return markersOnce;
}

function listenForDrops(zone, onFiles) {
  // The whole window accepts a drop: a file dropped just beside the zone
  // must not make the browser navigate away from the page.
  let depth = 0;
  const carriesFiles = (event) => Array.from(event.dataTransfer?.types ?? []).includes('Files');
  window.addEventListener('dragenter', (event) => {
    if (!carriesFiles(event)) return;
    depth += 1;
    zone.classList.add('is-over');
  });
  window.addEventListener('dragleave', (event) => {
    if (!carriesFiles(event)) return;
    depth = Math.max(0, depth - 1);
    if (depth === 0) zone.classList.remove('is-over');
  });
  window.addEventListener('dragover', (event) => {
    event.preventDefault();
    if (event.dataTransfer) event.dataTransfer.dropEffect = 'copy';
  });
  window.addEventListener('drop', (event) => {
    event.preventDefault();
    depth = 0;
    zone.classList.remove('is-over');
    const files = Array.from(event.dataTransfer?.files ?? []);
    if (files.length) onFiles(files);
  });
}

function drawSummary(section, name, s, markers) {
  const rows = s.column_summaries.map((c, i) =>
    el(
      'tr',
      { 'data-testid': 'column-row', 'data-column': c.name, 'data-kind': c.kind, 'data-missing': c.missing },
      el('td', { class: 'num muted', text: String(i + 1) }),
      el('th', { scope: 'row', class: 'column-name', text: c.name }),
      el(
        'td',
        {},
        el('span', { class: `kind kind-${c.kind}`, title: KIND_NOTES[c.kind] ?? '', text: KIND_LABELS[c.kind] ?? c.kind }),
      ),
      missingCell(c.missing, s.rows),
      el('td', { class: 'num', text: formatCount(c.distinct) }),
      el('td', {}, kindSelect(c)),
      el('td', {}, roleSelect(c)),
    ),
  );
  const table = el(
    'table',
    { class: 'columns', 'data-testid': 'column-table' },
    el('caption', { text: 'Columns, with the kind inferred from their values' }),
    el(
      'thead',
      {},
      el(
        'tr',
        {},
        el('th', { scope: 'col', class: 'num', text: '#' }),
        el('th', { scope: 'col', text: 'Column' }),
        el('th', { scope: 'col', text: 'Kind' }),
        el('th', { scope: 'col', class: 'num', text: 'Missing' }),
        el('th', { scope: 'col', class: 'num', text: 'Distinct values' }),
        el('th', { scope: 'col', text: 'Use as kind' }),
        el('th', { scope: 'col', text: 'Role' }),
      ),
    ),
    el('tbody', {}, rows),
  );
  const facts = el(
    'dl',
    { class: 'facts' },
    fact('Encoding', s.encoding, 'summary-encoding'),
    fact('Delimiter', s.delimiter, 'summary-delimiter'),
  );
  const notes = el(
    'p',
    { class: 'footnote' },
    markers ? `Counted as missing: ${describeMarkers(markers)}. ` : null,
    'Kinds: binary when every value is 0 or 1, numeric when every value is a number, categorical for a modest ' +
      'number of labels, text for long or mostly distinct values.',
  );
  replaceChildren(
    section,
    el('h2', { class: 'file-name', 'data-testid': 'summary-file', text: name }),
    el(
      'p',
      { class: 'shape', 'data-testid': 'summary-shape' },
      el('span', { 'data-testid': 'summary-rows', text: formatCount(s.rows) }),
      s.rows === 1 ? ' row × ' : ' rows × ',
      el('span', { 'data-testid': 'summary-columns', text: formatCount(s.columns) }),
      s.columns === 1 ? ' column' : ' columns',
    ),
    facts,
    // How the file was read where it matters (encoding fallback, decimal
    // commas, a dropped empty last column): the reader must see it.
    s.notices?.length
      ? el('ul', { class: 'problems', 'data-testid': 'read-notices' }, s.notices.map((n) => el('li', { class: 'warn', text: n })))
      : null,
    el('div', { class: 'table-wrap' }, table),
    notes,
  );
}

function fact(label, value, testId) {
  const wrap = el('div', { class: 'fact' });
  return append(wrap, el('dt', { text: label }), el('dd', { 'data-testid': testId, text: value }));
}

function missingCell(missing, rows) {
  if (missing === 0) return el('td', { class: 'num muted', text: 'none' });
  const share = rows > 0 ? (100 * missing) / rows : 0;
  return el(
    'td',
    { class: 'num has-missing' },
    formatCount(missing),
    el('span', { class: 'share', text: ` (${share.toFixed(share < 10 ? 1 : 0)}%)` }),
  );
}

function describeMarkers(markers) {
  return markers.map((m) => (m === '' ? 'empty cells' : `“${m}”`)).join(', ') + ' (in any letter case)';
}

function formatBytes(n) {
  if (n >= 1e6) return `${(n / 1e6).toFixed(1)} MB`;
  if (n >= 1e3) return `${(n / 1e3).toFixed(0)} kB`;
  return `${n} bytes`;
}

const KIND_CHOICES = ['numeric', 'binary', 'categorical', 'text'];

function kindSelect(c) {
  const current = store.study?.columns.kinds?.[c.name] ?? '';
  const select = el(
    'select',
    { 'aria-label': `Kind used for column ${c.name}`, 'data-testid': 'kind-select', 'data-col': c.name },
    el('option', { value: '', text: `as inferred (${c.kind})` }),
    KIND_CHOICES.map((k) => el('option', { value: k, text: k })),
  );
  select.value = current;
  select.addEventListener('change', () => {
    if (!store.study) return;
    if (select.value) store.study.columns.kinds[c.name] = select.value;
    else delete store.study.columns.kinds[c.name];
    saveStudy();
    changed('study');
  });
  return select;
}

function roleSelect(c) {
  const select = el(
    'select',
    { 'aria-label': `Role of column ${c.name}`, 'data-testid': 'role-select', 'data-col': c.name },
    ROLES.map((r) => el('option', { value: r.id, text: r.label })),
  );
  select.value = roleOf(store.study, c.name);
  select.addEventListener('change', () => {
    if (!store.study) return;
    setRole(store.study, c.name, select.value);
    saveStudy();
    changed('study');
    // Other selects may have changed (one id, one group, one notes column).
    for (const other of document.querySelectorAll('[data-testid="role-select"]')) {
      other.value = roleOf(store.study, other.dataset.col);
    }
    refreshRoles();
  });
  return select;
}

let refreshRoles = () => {};

/** The part of the data step below the column table: the group's treated
 * value, the roles at a glance, problems, and the button that prepares. */
function rolesPanel(onReady) {
  const panel = el('section', { class: 'roles-panel', 'aria-labelledby': 'roles-title' });
  const treated = el('select', { 'aria-label': 'Treated value of the group column', 'data-testid': 'treated-select' });
  treated.addEventListener('change', () => {
    store.study.columns.treated = treated.value;
    saveStudy();
    changed('study');
  });
  const recap = el('p', { class: 'roles-recap', 'data-testid': 'roles-recap' });
  const problems = el('ul', { class: 'problems', 'data-testid': 'problems' });
  const go = el('button', { type: 'button', class: 'button', 'data-testid': 'check-roles', text: 'Check the roles and continue' });
  const allCov = el('button', {
    type: 'button',
    class: 'button button-quiet',
    'data-testid': 'all-covariates',
    text: 'Make every unassigned column a covariate',
  });
  allCov.addEventListener('click', () => {
    for (const c of store.file.summary.column_summaries) {
      if (roleOf(store.study, c.name) === 'none' && c.kind !== 'text') setRole(store.study, c.name, 'covariate');
    }
    saveStudy();
    changed('study');
    for (const other of document.querySelectorAll('[data-testid="role-select"]')) {
      other.value = roleOf(store.study, other.dataset.col);
    }
    refreshRoles();
  });
  go.addEventListener('click', async () => {
    clearError();
    try {
      const p = await prepare();
      drawProblems(problems, p);
      onReady?.();
    } catch (err) {
      if (err?.kind !== 'cancelled') showError(err, 'The roles need a fix', 'Change the roles above and try again.');
    }
  });
  refreshRoles = async () => {
    const c = store.study.columns;
    recap.textContent =
      `Id: ${c.id || '—'} · group: ${c.group || '—'} · outcomes: ${c.outcomes.length} · ` +
      `covariates: ${c.covariates.length} · notes: ${c.notes || 'none'}`;
    replaceChildren(treated);
    if (!c.group) {
      treated.disabled = true;
      return;
    }
    treated.disabled = false;
    try {
      const levels = await plain('session_levels', { column: c.group, limit: 50 });
      replaceChildren(treated, levels.map((v) => el('option', { value: v, text: v })));
      if (!levels.includes(c.treated) && levels.length) {
        c.treated = levels[levels.length - 1];
        saveStudy();
      }
      treated.value = c.treated;
    } catch {
      // The worker was replaced (cancel); the select fills on the next change.
    }
  };
  refreshRoles();
  return append(
    panel,
    el('h2', { id: 'roles-title', text: 'Roles' }),
    el('p', {
      class: 'hint',
      text:
        'Say what each column is for in the Role column of the table: one id (unique per row), one group column ' +
        'with two values, outcomes, covariates to balance, and at most one note column.' +
        (store.restored ? ' These roles were restored from your last visit with a file of the same columns.' : ''),
    }),
    recap,
    el('div', { class: 'field-row' }, el('label', { class: 'field' }, el('span', { text: 'Treated value of the group' }), treated), allCov),
    go,
    problems,
  );
}

function drawProblems(list, p) {
  const items = [];
  items.push(
    el('li', {
      class: 'ok',
      text: `${formatCount(p.rows_used)} rows used: ${formatCount(p.treated)} treated (group = ${p.group_values[0]}), ` +
        `${formatCount(p.comparison)} comparison (group = ${p.group_values[1]}).`,
    }),
  );
  for (const f of p.fills) {
    items.push(el('li', { class: 'warn', text: `Column “${f.column}”: ${formatCount(f.cells)} missing cells filled (${f.method}).` }));
  }
  const shown = p.left_out.slice(0, 8);
  for (const l of shown) items.push(el('li', { class: 'warn', text: `Row ${l.row} left out: ${l.reason}` }));
  if (p.left_out.length > shown.length) {
    items.push(el('li', { class: 'warn', text: `…and ${formatCount(p.left_out.length - shown.length)} more rows left out.` }));
  }
  replaceChildren(list, items);
}



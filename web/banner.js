// The two message strips above every screen: the error banner (what went
// wrong, where, what to do) and the notice (information, no fault).

import { el, byTestId, replaceChildren } from './dom.js';

/** "Row 4 (the header is row 1), column “age”", or null when neither is known. */
export function describeLocation(error) {
  const parts = [];
  if (Number.isInteger(error?.row)) parts.push(`Row ${error.row} (the header is row 1)`);
  if (typeof error?.column === 'string') parts.push(`column “${error.column}”`);
  if (typeof error?.key === 'string') parts.push(`setting “${error.key}”`);
  return parts.length ? parts.join(', ') : null;
}

/**
 * Show an error: a title saying what failed, where (row and column when
 * known), the reason, and what to do next (`next`, or a default by kind).
 * Accepts the engine's error shape or any thrown value.
 */
export function showError(error, title, next = defaultNextStep(error)) {
  const banner = byTestId('error-banner');
  const where = describeLocation(error);
  // The core's `message` starts with its kind ("data: ", "study file (key
  // ...): "), which is for logs; `detail` is the sentence a reader needs,
  // and the location, when known, has its own line above it.
  const reason = error?.detail || error?.message || String(error);
  replaceChildren(
    banner,
    el('p', { class: 'banner-title', text: title }),
    where ? el('p', { class: 'banner-where', 'data-testid': 'error-where', text: where }) : null,
    el('p', { class: 'banner-reason', 'data-testid': 'error-reason', text: reason }),
    el('p', { class: 'banner-next', text: next }),
  );
  setData(banner, 'errorKind', error?.kind);
  setData(banner, 'errorRow', Number.isInteger(error?.row) ? error.row : null);
  setData(banner, 'errorColumn', error?.column);
  banner.hidden = false;
}

function defaultNextStep(error) {
  return error?.kind === 'internal'
    ? 'This is a fault in pairsight, not in your file. Try again; if it happens again, please report it.'
    : 'Correct the file and open it again; the page is ready for the next file.';
}

/** Hide the error banner. */
export function clearError() {
  const banner = byTestId('error-banner');
  banner.hidden = true;
  banner.replaceChildren();
  for (const key of ['errorKind', 'errorRow', 'errorColumn']) delete banner.dataset[key];
}

/** Show an informational notice. */
export function showNotice(text) {
  const notice = byTestId('notice');
  notice.textContent = text;
  notice.hidden = false;
}

/** Hide the notice. */
export function clearNotice() {
  const notice = byTestId('notice');
  notice.hidden = true;
  notice.textContent = '';
}

function setData(node, key, value) {
  if (value === null || value === undefined) delete node.dataset[key];
  else node.dataset[key] = String(value);
}

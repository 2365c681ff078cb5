// Saving a file the page made: the browser's own download, from memory.
// Nothing is uploaded; the object URL lives only in this page.
//
// Every file the page writes goes through here, whole or not at all: the
// content is built completely (a failure while building it throws before
// any download starts) and handed to the browser as one finished Blob,
// which the browser writes under a temporary name and renames when done.
// So a file with the final name is always a complete one.

import { el } from './dom.js';

/** An error in the shape the banner shows. */
function notSaved(name, why) {
  const message = `${name} was not saved: ${why}`;
  return { kind: 'internal', message, detail: message, row: null, column: null, key: null };
}

/** The finished Blob of `data` (text, a Blob or bytes), or an error. */
function wholeBlob(name, data, type) {
  if (data instanceof Blob) return data;
  if (typeof data === 'string') return new Blob([data], { type });
  if (data instanceof ArrayBuffer || ArrayBuffer.isView(data)) return new Blob([data], { type });
  // A canvas that could not be encoded hands over null; a Blob of that
  // would be a file holding the word "null".
  throw notSaved(name, 'its content could not be made (nothing was written).');
}

/**
 * Offer `data` (text, a Blob or bytes) as a download named `name`, of MIME
 * type `type`. Throws, and downloads nothing, when `data` is not content.
 * Returns the Blob handed to the browser.
 */
export function saveFile(name, data, type) {
  const blob = wholeBlob(name, data, type);
  const url = URL.createObjectURL(blob);
  const a = el('a', { href: url, download: name, hidden: true });
  document.body.append(a);
  a.click();
  a.remove();
  setTimeout(() => URL.revokeObjectURL(url), 10_000);
  return blob;
}

/**
 * Build a file's content with `build()` (sync or async), then save it as
 * `saveFile` does. If building fails, the error propagates and no download
 * starts. Resolves with the Blob handed to the browser.
 */
export async function saveBuilt(name, build, type) {
  const data = await build();
  return saveFile(name, data, type);
}

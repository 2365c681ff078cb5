// Saving a file the page made: the browser's own download, from memory.
// Nothing is uploaded; the object URL lives only in this page.

import { el } from './dom.js';

/** Offer `data` (text or Blob) as a download named `name`. */
export function saveFile(name, data, type) {
  const blob = data instanceof Blob ? data : new Blob([data], { type });
  const url = URL.createObjectURL(blob);
  const a = el('a', { href: url, download: name, hidden: true });
  document.body.append(a);
  a.click();
  a.remove();
  setTimeout(() => URL.revokeObjectURL(url), 10_000);
}

// Building the page from data without ever parsing data as markup: text goes
// in through textContent, everything else through attributes and properties.

/**
 * Make an element. `attrs` keys starting with `on` add event listeners,
 * `class` sets the class list, `text` sets textContent, `hidden`/`disabled`
 * set the boolean properties, anything else becomes an attribute. Children
 * may be elements, strings (added as text) or null (skipped).
 */
export function el(tag, attrs = {}, ...children) {
  const node = document.createElement(tag);
  for (const [key, value] of Object.entries(attrs)) {
    if (value === null || value === undefined || value === false) continue;
    if (key === 'text') node.textContent = String(value);
    else if (key === 'class') node.className = value;
    else if (key === 'hidden' || key === 'disabled') node[key] = Boolean(value);
    else if (key.startsWith('on') && typeof value === 'function') {
      node.addEventListener(key.slice(2), value);
    } else node.setAttribute(key, String(value));
  }
  append(node, ...children);
  return node;
}

/** Append children: elements as they are, strings as text, null skipped. */
export function append(parent, ...children) {
  for (const child of children.flat()) {
    if (child === null || child === undefined || child === false) continue;
    parent.append(typeof child === 'string' ? document.createTextNode(child) : child);
  }
  return parent;
}

/** Remove every child, then append the given ones. */
export function replaceChildren(parent, ...children) {
  parent.replaceChildren();
  return append(parent, ...children);
}

/** The one element matching a data-testid; a missing one is a bug of the page. */
export function byTestId(id, root = document) {
  const node = root.querySelector(`[data-testid="${id}"]`);
  if (!node) throw new Error(`page element [data-testid="${id}"] is missing`);
  return node;
}

/** A count with thousands separators, in the reader's locale. */
export function formatCount(n) {
  return Number(n).toLocaleString();
}

/**
 * `n` with `digits` decimals, without the minus sign of a value that rounds
 * to zero ("-0.00" reads as a negative number to a person).
 */
export function formatFixed(n, digits) {
  const text = Number(n).toFixed(digits);
  return /^-0(\.0*)?$/.test(text) ? text.slice(1) : text;
}

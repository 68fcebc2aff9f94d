// Making elements for the sheet: one helper that builds an element from a
// tag, properties (text, className, dataset, aria-*, role, for, or any DOM
// property) and children. Text is only ever set as textContent.

/** An element `tag` with `props` and `children` (null and undefined are skipped). */
export function el(doc, tag, props = {}, ...children) {
  const e = doc.createElement(tag);
  for (const [k, v] of Object.entries(props)) {
    if (v === undefined || v === null) continue;
    if (k === 'text') e.textContent = v;
    else if (k === 'className') e.className = v;
    else if (k === 'dataset') Object.assign(e.dataset, v);
    else if (k.startsWith('aria-') || k === 'role' || k === 'for') e.setAttribute(k, v);
    else e[k] = v;
  }
  for (const c of children) if (c) e.append(c);
  return e;
}

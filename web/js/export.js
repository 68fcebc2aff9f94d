// Saving to and reading from files: downloads go through a temporary blob:
// URL and an <a download> element (no network), opened files are read with
// File.text(). Nothing here looks inside the data.

import { formatNumber } from './numbers.js';

/** Offer `data` (string or Blob) as a download named `name`. */
export function download(name, data, type = 'application/octet-stream') {
  const blob = data instanceof Blob ? data : new Blob([data], { type });
  const url = URL.createObjectURL(blob);
  const a = document.createElement('a');
  a.href = url;
  a.download = name;
  a.rel = 'noopener';
  a.hidden = true;
  document.body.append(a);
  a.click();
  a.remove();
  // The click has started the download; give the browser a moment to read it.
  setTimeout(() => URL.revokeObjectURL(url), 10000);
}

/** A canvas as a PNG Blob. */
export function canvasPng(canvas) {
  return new Promise((resolve, reject) => {
    canvas.toBlob((b) => (b ? resolve(b) : reject(new Error('the chart could not be turned into a PNG'))), 'image/png');
  });
}

/** A file name from a title: letters, digits and dashes, at most 60 characters. */
export function fileStem(title, fallback = 'critbox') {
  const s = String(title || '').toLowerCase().normalize('NFKD').replace(/[^a-z0-9]+/g, '-').replace(/^-+|-+$/g, '').slice(0, 60).replace(/-+$/, '');
  return s || fallback;
}

/** Largest file the page opens (bytes). */
export const MAX_OPEN_BYTES = 64 * 1024 * 1024;

/** Read a user-chosen file as text, refusing very large ones with a clear message. */
export async function readFileText(file) {
  if (file.size > MAX_OPEN_BYTES) {
    throw new Error(`${file.name} is ${formatNumber(file.size / 1048576, { digits: 2 })} MB; the page opens results files up to ${MAX_OPEN_BYTES / 1048576} MB`);
  }
  return file.text();
}

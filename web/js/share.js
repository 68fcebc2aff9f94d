// Share links: the whole experiment config in the address's fragment (the
// part after #, which browsers never send to any server).
//
// Format, version 1:  #v1.<payload>
//   payload = base64url, without padding, of the config's JSON text (UTF-8)
//             compressed with raw DEFLATE (RFC 1951; CompressionStream
//             'deflate-raw').
// The config inside carries its own `schema` number; the core checks it.
//
// Decoding trusts nothing: the fragment's length, its characters, the size
// it inflates to, the UTF-8, the JSON, its nesting depth and its shape are
// each checked, and every failure comes back as a message that says what is
// wrong. Nothing from a link is ever evaluated or put into the page as HTML;
// the caller validates the config with the core before using it.
//
// When the format changes, add a decoder for the new version and keep the
// old ones in DECODERS, so links made by older pages keep working.

import { formatCount } from './numbers.js';

/** The link format this page writes. */
export const LINK_VERSION = 1;
/** Longest fragment accepted, in characters. */
export const MAX_FRAGMENT = 64 * 1024;
/** Most bytes a link may inflate to (the core accepts configs up to 256 KiB). */
export const MAX_CONFIG_BYTES = 256 * 1024;
/** Deepest nesting of objects and arrays accepted in a linked config. */
export const MAX_DEPTH = 16;

/** Bytes → base64url without padding. */
export function toBase64Url(bytes) {
  let bin = '';
  for (let i = 0; i < bytes.length; i += 0x8000) {
    bin += String.fromCharCode.apply(null, bytes.subarray(i, i + 0x8000));
  }
  return btoa(bin).replace(/\+/g, '-').replace(/\//g, '_').replace(/=+$/, '');
}

/** base64url (padding optional) → bytes; throws an Error on bad input. */
export function fromBase64Url(text) {
  if (!/^[A-Za-z0-9_-]*={0,2}$/.test(text)) throw new Error('it holds characters that base64url does not use');
  const clean = text.replace(/=+$/, '');
  if (clean.length % 4 === 1) throw new Error('its length is not possible for base64url (it may have been cut)');
  const b64 = clean.replace(/-/g, '+').replace(/_/g, '/') + '==='.slice((clean.length + 3) % 4);
  const bin = atob(b64);
  const out = new Uint8Array(bin.length);
  for (let i = 0; i < bin.length; i++) out[i] = bin.charCodeAt(i);
  return out;
}

/** Run bytes through a (De)CompressionStream, stopping past `limit` output bytes. */
async function pipe(stream, bytes, limit = Infinity) {
  const writer = stream.writable.getWriter();
  const written = writer.write(bytes).then(() => writer.close()).catch(() => { /* reported by the reader */ });
  const reader = stream.readable.getReader();
  const chunks = [];
  let total = 0;
  for (;;) {
    const { value, done } = await reader.read();
    if (done) break;
    total += value.length;
    if (total > limit) {
      reader.cancel().catch(() => {});
      throw new RangeError(`it expands to more than ${Math.round(limit / 1024)} KiB`);
    }
    chunks.push(value);
  }
  await written;
  const out = new Uint8Array(total);
  let at = 0;
  for (const c of chunks) { out.set(c, at); at += c.length; }
  return out;
}

/** DEFLATE-compress bytes (format 'deflate-raw', 'deflate' or 'gzip'). */
export function compress(bytes, format = 'deflate-raw') {
  return pipe(new CompressionStream(format), bytes);
}

/** Inflate bytes, refusing to produce more than `limit` bytes. */
export function decompress(bytes, format = 'deflate-raw', limit = Infinity) {
  return pipe(new DecompressionStream(format), bytes, limit);
}

/** The fragment (with its leading #) that carries a config. */
export async function encodeConfig(config) {
  const text = JSON.stringify(config);
  const packed = await compress(new TextEncoder().encode(text));
  return `#v${LINK_VERSION}.${toBase64Url(packed)}`;
}

/** The depth of nesting of a parsed JSON value (a number or string is 0). */
export function depthOf(value) {
  let max = 0;
  const stack = [[value, 0]];
  while (stack.length) {
    const [v, d] = stack.pop();
    if (v && typeof v === 'object') {
      if (d + 1 > max) max = d + 1;
      if (max > MAX_DEPTH) return max;
      for (const k of Object.keys(v)) stack.push([v[k], d + 1]);
    }
  }
  return max;
}

async function decodeV1(payload) {
  let packed;
  try {
    packed = fromBase64Url(payload);
  } catch (err) {
    throw new Error(`the link's data is damaged: ${err.message}`);
  }
  if (packed.length === 0) throw new Error('the link holds no experiment (its data is empty)');
  let bytes;
  try {
    bytes = await decompress(packed, 'deflate-raw', MAX_CONFIG_BYTES);
  } catch (err) {
    if (err instanceof RangeError) throw new Error(`the link's experiment is too large: ${err.message}; critbox configs are at most ${MAX_CONFIG_BYTES / 1024} KiB`);
    throw new Error('the link\'s data is damaged: it does not decompress (the link may have been cut or altered)');
  }
  try {
    return new TextDecoder('utf-8', { fatal: true }).decode(bytes);
  } catch {
    throw new Error('the link\'s data is damaged: it is not UTF-8 text');
  }
}

/** Decoders by link version; keep every version ever written. */
const DECODERS = new Map([[1, decodeV1]]);

/**
 * Read a fragment.
 * @param {string} hash  location.hash (with or without the leading #)
 * @returns {Promise<null | {ok: true, text: string, config: object, version: number}
 *                       | {ok: false, message: string}>}
 *   null when the fragment is empty (no link); `text` is the config's JSON
 *   text exactly as linked (hand it to the core's validator).
 */
export async function decodeFragment(hash) {
  const frag = String(hash || '').replace(/^#/, '');
  if (frag === '') return null;
  const fail = (message) => ({ ok: false, message });
  if (frag.length > MAX_FRAGMENT) {
    return fail(`the link is ${formatCount(frag.length)} characters after the #; critbox links are at most ${formatCount(MAX_FRAGMENT)}, so it was not read`);
  }
  const m = /^v(\d{1,6})\.(.*)$/s.exec(frag);
  if (!m) return fail('the part after # is not a critbox experiment (a critbox link ends in #v1. followed by its data)');
  const version = Number(m[1]);
  const decode = DECODERS.get(version);
  if (!decode) {
    if (version > LINK_VERSION) {
      return fail(`the link was made by a newer critbox (link format ${version}); this page reads formats up to ${LINK_VERSION}. Open it with the newer page, or ask for a results file instead`);
    }
    return fail(`link format ${version} is not one critbox has written; this page reads format ${[...DECODERS.keys()].join(', ')}`);
  }
  let text;
  try {
    text = await decode(m[2]);
  } catch (err) {
    return fail(err.message);
  }
  let config;
  try {
    config = JSON.parse(text);
  } catch (err) {
    return fail(`the link's experiment is not valid JSON (${err.message})`);
  }
  if (!config || typeof config !== 'object' || Array.isArray(config)) {
    return fail('the link\'s experiment is not a config object');
  }
  const depth = depthOf(config);
  if (depth > MAX_DEPTH) {
    return fail(`the link's experiment is nested more than ${MAX_DEPTH} levels deep; a critbox config never is`);
  }
  return { ok: true, text, config, version };
}

/** The page's address with `fragment` in place of any fragment it has. */
export function linkFor(fragment, href = location.href) {
  return href.replace(/#.*$/s, '') + fragment;
}

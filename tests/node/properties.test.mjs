// Property tests of the page's readers of untrusted text (fast-check; property
// testing as in Claessen & Hughes 2000, "QuickCheck"): share links and
// results files. Any input gives a config or a message, and a message is
// plain text that the page puts in with textContent, never as HTML.
//  - decodeFragment (web/js/share.js) on arbitrary strings, arbitrary
//    "#v1." payloads, DEFLATE streams of arbitrary text and JSON, and
//    mutations of the hostile link cases in fuzz/seeds/links: it resolves
//    (never rejects) to null, {ok: true, text, config} with a plain object
//    config no deeper than MAX_DEPTH, or {ok: false, message} with a
//    non-empty message.
//  - Results.fromSaved (the WebAssembly build's results-file reader, which
//    the results worker calls) on mutations of saved results files: it
//    returns a handle or throws an Error with a message; a trap of the
//    WebAssembly module (a panic in the core) fails the test.
//  - the message area (web/js/messages.js) shows every message as text.
// FC_RUNS sets the number of cases per property (default 300).
import { test } from 'node:test';
import assert from 'node:assert/strict';
import fs from 'node:fs';
import path from 'node:path';
import { deflateRawSync } from 'node:zlib';
import { fileURLToPath } from 'node:url';
import fc from 'fast-check';
import { decodeFragment, MAX_DEPTH, depthOf } from '../../web/js/share.js';

const root = process.env.CRITBOX_ROOT || path.resolve(path.dirname(fileURLToPath(import.meta.url)), '../..');
const runs = Number(process.env.FC_RUNS || 300);
const params = { numRuns: runs, seed: 20261202 };
const linkSeeds = fs.readdirSync(path.join(root, 'fuzz/seeds/links')).sort()
  .map((f) => fs.readFileSync(path.join(root, 'fuzz/seeds/links', f), 'utf8'));
const fragmentOf = (text) => `#v1.${deflateRawSync(Buffer.from(text, 'utf8')).toString('base64url')}`;

/** The decoder's answer is one of its three documented shapes. */
function checkDecoded(got) {
  if (got === null) return;
  assert.equal(typeof got, 'object');
  if (got.ok) {
    assert.equal(typeof got.text, 'string');
    assert.ok(got.config && typeof got.config === 'object' && !Array.isArray(got.config));
    assert.ok(depthOf(got.config) <= MAX_DEPTH);
  } else {
    assert.equal(got.ok, false);
    assert.equal(typeof got.message, 'string');
    assert.ok(got.message.trim().length > 0, 'an empty message');
  }
}

/** A string edited at a few places: characters replaced, dropped, inserted or the end cut. */
const mutated = (seeds) => fc.tuple(fc.constantFrom(...seeds),
  fc.array(fc.tuple(fc.nat(), fc.integer({ min: 0, max: 3 }), fc.string({ maxLength: 4 })), { minLength: 1, maxLength: 6 }))
  .map(([s, edits]) => {
    let t = s;
    for (const [at, kind, piece] of edits) {
      const i = t.length ? at % t.length : 0;
      if (kind === 0) t = t.slice(0, i) + piece + t.slice(i + 1);
      else if (kind === 1) t = t.slice(0, i) + t.slice(i + 1 + piece.length);
      else if (kind === 2) t = t.slice(0, i) + piece + t.slice(i);
      else t = t.slice(0, Math.max(4, i));
    }
    return t;
  });

test('share links: any fragment gives a config or a message, never an exception', async () => {
  await fc.assert(fc.asyncProperty(fc.string({ maxLength: 200 }), async (s) => checkDecoded(await decodeFragment(s))), params);
  await fc.assert(fc.asyncProperty(fc.string({ unit: 'binary', maxLength: 200 }), async (s) => checkDecoded(await decodeFragment(`#v1.${s}`))), params);
  await fc.assert(fc.asyncProperty(fc.base64String({ maxLength: 400 }), async (s) => checkDecoded(await decodeFragment(`#v1.${s.replace(/=+$/, '').replace(/\+/g, '-').replace(/\//g, '_')}`))), params);
  await fc.assert(fc.asyncProperty(fc.string({ unit: 'binary', maxLength: 300 }), async (s) => checkDecoded(await decodeFragment(fragmentOf(s)))), params);
  await fc.assert(fc.asyncProperty(fc.jsonValue({ maxDepth: 24 }), async (v) => {
    const got = await decodeFragment(fragmentOf(JSON.stringify(v)));
    checkDecoded(got);
    // A decoded link hands over exactly the text that was linked.
    if (got?.ok) assert.equal(got.text, JSON.stringify(v));
  }), params);
  await fc.assert(fc.asyncProperty(mutated(linkSeeds), async (s) => checkDecoded(await decodeFragment(s))), params);
});

test('share links: the hostile cases give their messages', async () => {
  assert.ok(linkSeeds.length >= 10, 'the link seeds are in fuzz/seeds/links');
  const big = await decodeFragment(`#v1.${'A'.repeat(1 << 20)}`);
  assert.equal(big.ok, false);
  assert.match(big.message, /characters after the #; critbox links are at most/);
  for (const s of linkSeeds) checkDecoded(await decodeFragment(s));
});

const pkg = path.join(root, 'web/pkg');
const haveWasm = fs.existsSync(path.join(pkg, 'critbox_wasm.js'));

test('results files: any mutation gives results or an Error with a message, never a trap', { skip: !haveWasm && 'web/pkg is missing (scripts/build makes it)' }, async () => {
  const { default: init, ...cb } = await import(path.join(pkg, 'critbox_wasm.js'));
  await init({ module_or_path: fs.readFileSync(path.join(pkg, 'critbox_wasm_bg.wasm')) });
  const seeds = fs.readdirSync(path.join(root, 'fuzz/seeds/results')).sort()
    .map((f) => fs.readFileSync(path.join(root, 'fuzz/seeds/results', f), 'utf8'));
  assert.ok(seeds.length >= 2, 'saved results files are in fuzz/seeds/results');
  for (const s of seeds) cb.Results.fromSaved(s).free();
  let opened = 0;
  const open = (text) => {
    let r;
    try {
      r = cb.Results.fromSaved(text);
    } catch (err) {
      assert.ok(!(err instanceof WebAssembly.RuntimeError), `the core trapped: ${err && err.message}`);
      const message = err instanceof Error ? err.message : String(err);
      assert.ok(message.trim().length > 0, 'an empty message');
      return;
    }
    opened += 1;
    r.free();
  };
  // Text edits of whole files, and JSON-level edits: a value replaced by an arbitrary one.
  fc.assert(fc.property(mutated(seeds), open), { ...params, numRuns: Math.max(50, runs / 3) });
  const parsed = seeds.map((s) => JSON.parse(s));
  const paths = (v, here = [], out = []) => {
    if (v && typeof v === 'object') for (const [k, x] of Object.entries(v)) { out.push([...here, k]); if (here.length < 4) paths(x, [...here, k], out); }
    return out;
  };
  fc.assert(fc.property(fc.nat(parsed.length - 1), fc.nat(), fc.jsonValue({ maxDepth: 3 }), (which, at, value) => {
    const doc = structuredClone(parsed[which]);
    const all = paths(doc);
    const p = all[at % all.length];
    let o = doc;
    for (const k of p.slice(0, -1)) o = o[k];
    o[p[p.length - 1]] = value;
    open(JSON.stringify(doc));
  }), { ...params, numRuns: Math.max(50, runs / 3) });
  assert.ok(opened >= 1, 'some mutated files still open (the mutations are not all fatal)');
});

test('messages: hostile text is shown as text, never as HTML', async () => {
  // A minimal document whose elements refuse innerHTML and insertAdjacentHTML.
  const made = [];
  const element = (tag) => {
    const e = {
      tag, children: [], attrs: {}, className: '', type: '', textContent: '',
      append(...c) { this.children.push(...c); }, replaceChildren(...c) { this.children = c; },
      setAttribute(k, v) { this.attrs[k] = String(v); }, addEventListener() {},
      insertAdjacentHTML() { throw new Error('insertAdjacentHTML used'); },
    };
    Object.defineProperty(e, 'innerHTML', { set() { throw new Error('innerHTML used'); }, get() { return ''; } });
    made.push(e);
    return e;
  };
  globalThis.document = { createElement: element };
  try {
    const { createMessages } = await import('../../web/js/messages.js');
    const state = { messages: [] };
    const ui = { messages: element('div'), notes: element('div') };
    const m = createMessages(state, ui);
    await fc.assert(fc.asyncProperty(mutated(linkSeeds), async (s) => {
      const got = await decodeFragment(s);
      if (got && !got.ok) m.showError(got.message);
    }), { ...params, numRuns: Math.max(50, runs / 3) });
    m.showError('<img src=x onerror="window.__pwned=1">');
    const shown = ui.messages.children.at(-1).children[0];
    assert.equal(shown.textContent, '<img src=x onerror="window.__pwned=1">');
  } finally {
    delete globalThis.document;
  }
});

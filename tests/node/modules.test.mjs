// The page's modules (web/js) keep the shape DEVELOPERS.md asks of them: each
// under about 450 lines, each opening with a comment that says its job, and
// every name one imports is a name the other exports (the single-file build,
// scripts/build-single, reads only `import { a, b } from './x.js';` and
// `export function|class|const NAME`, so that is all this reads too).
// Limits: common practice, no source (the 450-line figure is the project's).
import { test } from 'node:test';
import assert from 'node:assert/strict';
import fs from 'node:fs';
import path from 'node:path';
import { fileURLToPath } from 'node:url';

const root = process.env.CRITBOX_ROOT || path.resolve(path.dirname(fileURLToPath(import.meta.url)), '../..');
const jsDir = path.join(root, 'web', 'js');
const MAX_LINES = 450;

const modules = fs.readdirSync(jsDir).filter((f) => f.endsWith('.js')).sort();
const source = Object.fromEntries(modules.map((f) => [f, fs.readFileSync(path.join(jsDir, f), 'utf8')]));

/** Names a module exports, in the forms the single-file build accepts. */
function exportsOf(src) {
  return new Set([...src.matchAll(/^export\s+(?:async\s+)?(?:function\*?|class|const)\s+([\w$]+)/gm)].map((m) => m[1]));
}

/** [{names, from}] for each `import { ... } from './x.js';` of a module. */
function importsOf(src) {
  return [...src.matchAll(/^import\s*\{([^}]*)\}\s*from\s*'\.\/([\w-]+\.js)';/gm)].map((m) => ({
    names: m[1].split(',').map((s) => s.trim().split(/\s+as\s+/)[0]).filter(Boolean),
    from: m[2],
  }));
}

test('web/js has modules to check', () => {
  assert.ok(modules.length >= 20, `expected the page's modules in ${jsDir}, found ${modules.length}`);
});

for (const f of modules) {
  test(`${f}: under ${MAX_LINES} lines and opens with a comment saying its job`, () => {
    const lines = source[f].split('\n').length - (source[f].endsWith('\n') ? 1 : 0);
    assert.ok(lines <= MAX_LINES, `${f} has ${lines} lines (at most ${MAX_LINES})`);
    const head = source[f].split('\n').slice(0, 2);
    assert.ok(head.every((l) => l.startsWith('// ')), `${f} does not open with a "// " comment of at least two lines`);
  });

  test(`${f}: every imported name is exported by its module`, () => {
    for (const { names, from } of importsOf(source[f])) {
      assert.ok(source[from] !== undefined, `${f} imports ./${from}, which is not in web/js`);
      const exported = exportsOf(source[from]);
      for (const n of names) assert.ok(exported.has(n), `${f} imports ${n} from ./${from}, which does not export it`);
    }
  });
}

// Writes the hostile share-link cases (the ones tests/browser/share.test.mjs
// checks in the page) out as files under fuzz/seeds/links, once, for the
// link decoder's property tests (tests/node/properties.test.mjs) to mutate.
// The 1 MB fragment case is left to the test's own generator (a 1 MB file
// is no use as a mutation seed). Run: node scripts/write-link-seeds.mjs
import { deflateRawSync } from 'node:zlib';
import { mkdirSync, readFileSync, writeFileSync } from 'node:fs';
import path from 'node:path';
import { fileURLToPath } from 'node:url';

const root = path.resolve(path.dirname(fileURLToPath(import.meta.url)), '..');
const rover = JSON.parse(readFileSync(path.join(root, 'web/presets/rover-a2c-vs-qac.json'), 'utf8'));
const fragmentOf = (text) => `#v1.${deflateRawSync(Buffer.from(text, 'utf8')).toString('base64url')}`;
const deep = `{"schema":1,"title":${'['.repeat(5000)}${']'.repeat(5000)}}`;
const cases = {
  'valid-rover': fragmentOf(JSON.stringify(rover)),
  'huge-number': fragmentOf(JSON.stringify(rover).replace('"seeds":10', '"seeds":1e308')),
  'beyond-double': fragmentOf(JSON.stringify(rover).replace('"steps":30000', '"steps":1e400')),
  'nan': fragmentOf(JSON.stringify(rover).replace('"slip":0', '"slip":NaN')),
  'deep-nesting': fragmentOf(deep),
  'unknown-version': '#v7.AAAA',
  'not-a-link': '#settings',
  'damaged': '#v1.%%%%',
  'cut': fragmentOf(JSON.stringify(rover)).slice(0, 60),
  'bomb': `#v1.${deflateRawSync(Buffer.alloc(4 * 1024 * 1024, 32)).toString('base64url')}`,
  'not-an-object': fragmentOf('[1,2,3]'),
  'unknown-field': fragmentOf(JSON.stringify({ ...rover, run_this: 'rm -rf /' })),
  'html-label': fragmentOf(JSON.stringify({ ...rover, title: '</textarea><script>window.__pwned=2</script>', variants: [{ label: '<img src=x onerror="window.__pwned=1">' }] })),
};
const dir = path.join(root, 'fuzz/seeds/links');
mkdirSync(dir, { recursive: true });
for (const [name, text] of Object.entries(cases)) writeFileSync(path.join(dir, `${name}.txt`), text);
console.log(`wrote ${Object.keys(cases).length} link cases to ${path.relative(root, dir)}`);

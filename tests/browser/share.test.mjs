// Share links: a copied link opened in a fresh browser reproduces the
// experiment and its numbers; a link written by an independent encoder
// (Node's zlib, following the format in web/js/share.js) opens; hostile or
// broken links give a clear message and the default experiment, run no
// script and insert no HTML, and the page keeps working.

import { test, before, after } from 'node:test';
import assert from 'node:assert/strict';
import { readFile } from 'node:fs/promises';
import { deflateRawSync } from 'node:zlib';
import path from 'node:path';
import { setUp, openPage, repoRoot, runToEnd, shoot } from './helpers.mjs';

const ROOT = process.env.CRITBOX_ROOT || repoRoot;
let env;
let rover;

before(async () => {
  env = await setUp();
  rover = JSON.parse(await readFile(path.join(ROOT, 'web', 'presets', 'rover-a2c-vs-qac.json'), 'utf8'));
});
after(async () => { await env?.close(); });

/** A link fragment made outside the page: raw DEFLATE (RFC 1951), base64url. */
const fragmentOf = (text) => `#v1.${deflateRawSync(Buffer.from(text, 'utf8')).toString('base64url')}`;

/** Open the page at a fragment, in a fresh context; watch for scripts that should never run. */
async function openAt(fragment) {
  const dialogs = [];
  const opened = await openPage(env, {
    path: fragment,
    before: async (page) => {
      page.on('dialog', (d) => { dialogs.push(d.message()); d.dismiss(); });
    },
  });
  return { ...opened, dialogs };
}

test('share link round trip: copy, open in a new browser context, run, identical numbers', async () => {
  const first = await openPage(env, { permissions: ['clipboard-read', 'clipboard-write'] });
  const { page } = first;
  await page.fill('#title', 'Shared rover: does QAC catch up? “quotes” & ünïcode');
  await page.fill('#seeds', '3');
  await page.fill('#steps', '3000');
  await page.fill('#master-seed', '12345');
  await page.fill('#f-variants-1-learner-actor_step', '0.02');
  await page.click('#copy-link');
  await page.waitForFunction(() => /Link copied/.test(document.getElementById('notes').textContent));
  const link = await page.inputValue('#share-url');
  assert.equal(await page.evaluate(() => navigator.clipboard.readText()), link);
  assert.match(link, /^http:\/\/127\.0\.0\.1:\d+\/#v1\.[A-Za-z0-9_-]+$/);
  assert.ok(link.length < 2000, `a short link (${link.length} characters)`);
  const config = await page.evaluate(() => window.__critbox.state.config);
  await runToEnd(page);
  const summary = await page.evaluate(() => window.__critbox.state.summary);
  await shoot(page, 'share-link-made.png');
  await first.context.close();

  const second = await openAt(link.slice(link.indexOf('#')));
  assert.deepEqual(await second.page.evaluate(() => window.__critbox.state.config), config);
  assert.equal(await second.page.inputValue('#title'), config.title);
  assert.match(await second.page.textContent('#notes'), /Opened the experiment from the link/);
  assert.equal(new URL(second.page.url()).hash, '', 'the fragment is cleared once read');
  await runToEnd(second.page);
  assert.deepEqual(await second.page.evaluate(() => window.__critbox.state.summary), summary);
  assert.deepEqual(second.problems, []);
  await second.context.close();
});

test('a link written by an independent DEFLATE encoder opens', async () => {
  const cfg = { ...rover, title: 'Made outside the page', seeds: 2 };
  const { page, context, problems } = await openAt(fragmentOf(JSON.stringify(cfg)));
  assert.equal(await page.inputValue('#title'), 'Made outside the page');
  assert.equal(await page.inputValue('#seeds'), '2');
  assert.equal(await page.locator('#messages .msg').count(), 0);
  assert.deepEqual(problems, []);
  await context.close();
});

const HOSTILE_LABEL = '<img src=x onerror="window.__pwned=1;alert(1)">';
const HOSTILE_TITLE = '</textarea><script>window.__pwned=2</script>';

/** Each case: a fragment and what the message must say. */
function hostileCases() {
  const deep = `{"schema":1,"title":${'['.repeat(5000)}${']'.repeat(5000)}}`;
  const huge = JSON.stringify(rover).replace('"seeds":10', '"seeds":1e308');
  const beyond = JSON.stringify(rover).replace('"steps":30000', '"steps":1e400');
  const bomb = `#v1.${deflateRawSync(Buffer.alloc(4 * 1024 * 1024, 32)).toString('base64url')}`;
  return [
    { name: 'huge number', fragment: fragmentOf(huge), message: /seeds: invalid type: floating point `1e\+308`/ },
    { name: 'number beyond double range', fragment: fragmentOf(beyond), message: /number out of range/ },
    { name: 'NaN', fragment: fragmentOf(JSON.stringify(rover).replace('"slip":0', '"slip":NaN')), message: /not valid JSON/ },
    { name: 'deep nesting', fragment: fragmentOf(deep), message: /nested more than 16 levels/ },
    { name: '1 MB fragment', fragment: `#v1.${'A'.repeat(1 << 20)}`, message: /1,048,57\d characters after the #; critbox links are at most/ },
    { name: 'unknown version', fragment: '#v7.AAAA', message: /newer critbox \(link format 7\)/ },
    { name: 'not a critbox link', fragment: '#settings', message: /not a critbox experiment/ },
    { name: 'damaged data', fragment: '#v1.%%%%', message: /damaged/ },
    { name: 'cut data', fragment: fragmentOf(JSON.stringify(rover)).slice(0, 60), message: /damaged|not valid JSON/ },
    { name: 'decompression bomb', fragment: bomb, message: /too large: it expands to more than 256 KiB/ },
    { name: 'not an object', fragment: fragmentOf('[1,2,3]'), message: /not a config object/ },
    { name: 'unknown field', fragment: fragmentOf(JSON.stringify({ ...rover, run_this: 'rm -rf /' })), message: /unknown field `run_this`/ },
  ];
}

test('hostile and broken links: clear message, default experiment, no script, page still works', async () => {
  // One browser context; each link is a fresh load of the page (a new query
  // string, so the fragment is not just a hash change).
  const { page, context, problems, dialogs } = await openAt('');
  let n = 0;
  for (const c of hostileCases()) {
    n += 1;
    await page.goto(`${env.server.url}?case=${n}${c.fragment}`);
    await page.waitForFunction(() => window.__critbox && window.__critbox.ready, null, { timeout: 30000 });
    const messages = (await page.locator('#messages .msg p').allTextContents()).join('\n');
    assert.match(messages, /^This link could not be opened: /, `${c.name}: ${messages}`);
    assert.match(messages, c.message, `${c.name}: ${messages}`);
    assert.ok(messages.length < 1000, `${c.name}: the message is short enough to read (${messages.length} characters)`);
    // The safe default: the rover preset, ready to train.
    assert.equal(await page.inputValue('#title'), rover.title, c.name);
    await page.waitForFunction(() => !document.getElementById('train').disabled);
    assert.deepEqual(dialogs, [], c.name);
    assert.deepEqual(problems, [], c.name);
    if (c.name === '1 MB fragment') await shoot(page, 'link-refused.png');
  }
  await context.close();
});

test('a link with markup in its labels shows it as text and runs nothing', async () => {
  const cfg = {
    ...rover,
    title: HOSTILE_TITLE,
    seeds: 2,
    steps: 1500,
    variants: [{ label: HOSTILE_LABEL }, { label: 'QAC', learner: { family: 'qac', actor_step: 0.01 } }],
  };
  const { page, context, problems, dialogs } = await openAt(fragmentOf(JSON.stringify(cfg)));
  assert.equal(await page.inputValue('#title'), HOSTILE_TITLE);
  assert.equal(await page.inputValue('#f-variants-0-label'), HOSTILE_LABEL);
  await runToEnd(page);
  // The label appears as literal text in the tables, and no element came from it.
  assert.equal((await page.locator('#scores-body tr').first().locator('th').textContent()).trim(), HOSTILE_LABEL);
  assert.match(await page.textContent('#comparisons-body'), /<img src=x onerror=/);
  assert.equal(await page.locator('img').count(), 0);
  assert.equal(await page.locator('script:not([src])').count(), 0);
  assert.equal(await page.evaluate(() => window.__pwned), undefined);
  assert.deepEqual(dialogs, []);
  assert.deepEqual(problems, []);
  await shoot(page, 'hostile-label-as-text.png');
  await context.close();
});

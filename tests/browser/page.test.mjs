// End-to-end tests of the page in headless Chromium: a person's path from
// preset to finished run, and the checks that stop a bad config.
// Run: cd tests/browser && npm ci && npm test (needs web/pkg built).

import { test, before, after } from 'node:test';
import assert from 'node:assert/strict';
import { readFile } from 'node:fs/promises';
import path from 'node:path';
import { setUp, openPage, trainButtonAx, countColourInPlot, outDir, repoRoot } from './helpers.mjs';

const ROOT = process.env.CRITBOX_ROOT || repoRoot;
const ROVER = 'rover-a2c-vs-qac.json';
/** A step budget long enough that a run is still going when paused. */
const LONG_STEPS = 10000000;
let env;

before(async () => { env = await setUp(); });
after(async () => { await env?.close(); });

async function preset(file) {
  return JSON.parse(await readFile(path.join(ROOT, 'web', 'presets', file), 'utf8'));
}

/** Screenshot with the settings sheet scrolled to its top. */
async function shoot(page, name) {
  await page.evaluate(() => { document.getElementById('experiment').scrollTop = 0; });
  await page.screenshot({ path: path.join(outDir, name) });
}

async function waitForRunEnd(page, timeout = 180000) {
  await page.waitForFunction(() => {
    const r = window.__critbox.state.run;
    return r && (r.status === 'done' || r.status === 'cancelled');
  }, null, { timeout, polling: 200 });
}

test('rover preset: train 3 seeds × 3000 steps, curves drawn, summary filled', async () => {
  const cfg = await preset(ROVER);
  const { page, context, problems, requests } = await openPage(env);

  // The rover preset is the one loaded first; the form shows its settings.
  assert.equal(await page.getAttribute(`#presets button[data-preset="${ROVER}"]`, 'aria-pressed'), 'true');
  assert.equal(await page.inputValue('#title'), cfg.title);
  assert.equal(await page.locator('#variants > li').count(), cfg.variants.length);

  await page.fill('#seeds', '3');
  await page.fill('#steps', '3000');
  await page.waitForFunction(() => !document.getElementById('train').disabled);
  const reason = await page.textContent('#run-reason');
  assert.match(reason, new RegExp(`${cfg.variants.length * 3} jobs`), reason);

  await page.click('#train');
  // While it runs, the run button is off and pause/cancel are on.
  await page.waitForFunction(() => document.getElementById('train').disabled && !document.getElementById('cancel').disabled);
  await waitForRunEnd(page);
  const status = await page.evaluate(() => window.__critbox.state.run.status);
  assert.equal(status, 'done');
  // The page compiled the module once; the training and results workers got
  // the compiled module and did not fetch the .wasm again.
  const wasmFetches = requests.filter((u) => u.endsWith('.wasm'));
  assert.equal(wasmFetches.length, 1, wasmFetches.join(', '));

  assert.equal(await page.getAttribute('#progress', 'value'), '100');
  assert.equal((await page.textContent('#percent')).trim(), '100%');
  assert.equal(await page.isDisabled('#train'), false, 'Train is usable again after the run');

  // Score table: one row per variant, in order, with a number for the mean
  // and all three seeds counted.
  const rows = page.locator('#scores-body tr');
  assert.equal(await rows.count(), cfg.variants.length);
  for (let i = 0; i < cfg.variants.length; i++) {
    assert.equal((await rows.nth(i).locator('th').textContent()).trim(), cfg.variants[i].label);
    const mean = await rows.nth(i).locator('td').nth(0).locator('.main').textContent();
    assert.match(mean, /^[−-]?\d+(\.\d+)?$/, `mean of ${cfg.variants[i].label}: ${mean}`);
    const seeds = await rows.nth(i).locator('td').last().locator('.main').textContent();
    assert.equal(seeds, '3 of 3');
  }

  // The curve: wait for the frame after the run ended, then look for the
  // first variant's colour inside the plot area.
  await page.evaluate(() => new Promise((r) => requestAnimationFrame(() => requestAnimationFrame(r))));
  const drawn = await page.evaluate(() => window.__critbox.lastDraw);
  assert.equal(drawn.series.length, cfg.variants.length);
  for (const s of drawn.series) assert.ok(s.points >= 2, `${s.label}: ${s.points} curve points drawn`);
  const colour = drawn.series[0].colour;
  assert.match(colour, /^#[0-9a-f]{6}$/i);
  const hits = await countColourInPlot(page, colour);
  assert.ok(hits > 100, `only ${hits} pixels of ${colour} in the plot area`);

  await shoot(page, 'rover-trained-light.png');

  // Same page in the dark scheme: the chart background follows it.
  await page.emulateMedia({ colorScheme: 'dark' });
  await page.evaluate(() => new Promise((r) => requestAnimationFrame(() => requestAnimationFrame(r))));
  const corner = await page.evaluate(() => Array.from(document.getElementById('curves').getContext('2d').getImageData(2, 2, 1, 1).data));
  assert.ok(corner[0] + corner[1] + corner[2] < 3 * 80, `dark chart background expected, got rgb(${corner.slice(0, 3)})`);
  await shoot(page, 'rover-trained-dark.png');

  // Only the page's own files were asked for.
  const foreign = requests.filter((u) => !u.startsWith(env.server.url) && !u.startsWith('data:') && !u.startsWith('blob:'));
  assert.deepEqual(foreign, []);
  assert.deepEqual(problems, []);
  assert.equal(await page.locator('#messages .msg').count(), 0);
  await context.close();
});

test('invalid input: the message names the field and the run button is disabled with that reason', async () => {
  const { page, context, problems } = await openPage(env);
  await page.waitForFunction(() => !document.getElementById('train').disabled);

  // Every form control has a label element.
  const unlabelled = await page.evaluate(() => [...document.querySelectorAll('input, select, textarea, progress')]
    .filter((el) => !el.labels || el.labels.length === 0).map((el) => el.id || el.outerHTML));
  assert.deepEqual(unlabelled, []);

  // A negative actor step size.
  await page.fill('#f-base-actor_step', '-1');
  await page.waitForFunction(() => document.getElementById('train').disabled);
  const reason = (await page.textContent('#run-reason')).trim();
  assert.match(reason, /actor_step/, reason);
  assert.match(reason, /-1/, reason);
  assert.equal(await page.getAttribute('#f-base-actor_step', 'aria-invalid'), 'true');
  const ax = await trainButtonAx(page);
  assert.ok(ax, 'Train button in the accessibility tree');
  assert.equal(ax.disabled, true);
  assert.equal(ax.description.trim(), reason);
  await shoot(page, 'invalid-actor-step.png');

  // Fixed again: the button comes back.
  await page.fill('#f-base-actor_step', '0.1');
  await page.waitForFunction(() => !document.getElementById('train').disabled);
  assert.equal(await page.getAttribute('#f-base-actor_step', 'aria-invalid'), null);

  // A map with no dock.
  await page.fill('#f-task-map', '#####\n#S..#\n#####');
  await page.waitForFunction(() => document.getElementById('train').disabled);
  const mapReason = (await page.textContent('#run-reason')).trim();
  assert.match(mapReason, /task\.map/, mapReason);
  assert.equal(await page.getAttribute('#f-task-map', 'aria-invalid'), 'true');
  assert.equal((await trainButtonAx(page)).description.trim(), mapReason);
  await shoot(page, 'invalid-map.png');

  // A blank required field and a word in a number field are caught by the form itself.
  await page.fill('#f-task-map', '#####\n#S.D#\n#####');
  await page.fill('#steps', '');
  await page.waitForFunction(() => /^steps: enter a number/.test(document.getElementById('run-reason').textContent));
  assert.equal(await page.isDisabled('#train'), true);
  await page.fill('#steps', '3000');
  await page.fill('#f-base-critic_step', 'fast');
  await page.waitForFunction(() => /^base\.critic_step: not a number/.test(document.getElementById('run-reason').textContent));
  assert.equal(await page.getAttribute('#f-base-critic_step', 'aria-invalid'), 'true');
  assert.equal(await page.isDisabled('#train'), true);

  assert.deepEqual(problems, []);
  await context.close();
});

test('a worker that fails shows a message and the page keeps working', async () => {
  // The training worker's script is replaced by one that throws on load;
  // the results and probe workers still work.
  const { page, context } = await openPage(env, {
    before: async (_page, ctx) => {
      await ctx.route('**/js/trainworker.js', (route) => route.fulfill({
        contentType: 'text/javascript',
        body: 'throw new Error("worker could not start (test)");\n',
      }));
    },
  });
  await page.fill('#seeds', '2');
  await page.fill('#steps', '1000');
  await page.waitForFunction(() => !document.getElementById('train').disabled);
  await page.click('#train');
  await waitForRunEnd(page, 30000);
  const messages = await page.locator('#messages .msg p').allTextContents();
  assert.ok(messages.length >= 1, 'an error message is shown');
  assert.ok(messages.some((m) => /worker/i.test(m)), messages.join('\n'));
  // Every job is counted as failed, the run ends, and Train works again.
  const failures = await page.locator('#scores-body td.fail').count();
  assert.ok(failures >= 1, 'the summary lists the failed jobs');
  assert.equal(await page.isDisabled('#train'), false);
  await shoot(page, 'worker-error.png');
  await context.close();
});

test('pause holds the run still, resume goes on, cancel ends it with a partial summary', async () => {
  const { page, context, problems } = await openPage(env);
  await page.fill('#seeds', '2');
  await page.fill('#steps', String(LONG_STEPS));
  await page.waitForFunction(() => !document.getElementById('train').disabled);
  await page.click('#train');
  const percent = () => page.evaluate(() => Number(document.getElementById('progress').value));
  const stepsDone = () => page.evaluate(() => Array.from(window.__critbox.state.run.stepsDone).reduce((a, b) => a + b, 0));
  await page.waitForFunction(() => Array.from(window.__critbox.state.run.stepsDone).some((s) => s > 0));
  // Long work shows its progress: a bar per variant and, after a moment, the time left.
  assert.equal(await page.locator('#variant-progress progress').count(), 3);
  await page.waitForFunction(() => /about .* left|almost done/.test(document.getElementById('eta').textContent), null, { timeout: 20000 });

  await page.click('#pause');
  assert.equal((await page.textContent('#pause')).trim(), 'Resume');
  await page.waitForFunction(() => window.__critbox.state.run.status === 'paused');
  const held = await stepsDone();
  assert.ok(held < 2 * 2 * LONG_STEPS, 'paused before the end');
  await page.waitForTimeout(400);
  assert.equal(await stepsDone(), held, 'no steps while paused');

  await page.click('#pause');
  await page.waitForFunction((h) => Array.from(window.__critbox.state.run.stepsDone).reduce((a, b) => a + b, 0) > h, held);

  await page.click('#cancel');
  await waitForRunEnd(page, 10000);
  assert.equal(await page.evaluate(() => window.__critbox.state.run.status), 'cancelled');
  assert.ok((await percent()) < 100);
  assert.match(await page.textContent('#percent'), /cancelled/);
  assert.match(await page.textContent('#scores-note'), /cancelled/);
  assert.equal(await page.isDisabled('#train'), false);
  assert.equal(await page.isDisabled('#pause'), true);
  await shoot(page, 'cancelled.png');
  assert.deepEqual(problems, []);
  await context.close();
});

test('variants list: add one, override its learner, duplicate it, remove them', async () => {
  const cfg = await preset(ROVER);
  const n = cfg.variants.length;
  const { page, context, problems } = await openPage(env);
  await page.waitForFunction(() => !document.getElementById('train').disabled);

  await page.click('#add-variant');
  assert.equal(await page.locator('#variants > li').count(), n + 1);
  // Focus moves to the new variant's label.
  assert.equal(await page.evaluate(() => document.activeElement.id), `f-variants-${n}-label`);
  await page.fill(`#f-variants-${n}-label`, 'QAC, small actor step');
  await page.selectOption(`#f-variants-${n}-add`, 'family');
  await page.selectOption(`#f-variants-${n}-learner-family`, 'qac');
  await page.selectOption(`#f-variants-${n}-add`, 'actor_step');
  // The override starts from the shared value.
  assert.equal(await page.inputValue(`#f-variants-${n}-learner-actor_step`), String(cfg.base.actor_step));
  await page.fill(`#f-variants-${n}-learner-actor_step`, '0.05');
  await page.waitForFunction((k) => /Ready: (\d+) variants/.exec(document.getElementById('run-reason').textContent)?.[1] === String(k), n + 1);
  const added = await page.evaluate((k) => window.__critbox.state.config.variants[k], n);
  assert.deepEqual(added, { label: 'QAC, small actor step', learner: { family: 'qac', actor_step: 0.05 } });
  // The preset's own variants are untouched.
  const kept = await page.evaluate((k) => window.__critbox.state.config.variants.slice(0, k), n);
  assert.deepEqual(kept, cfg.variants);
  await page.evaluate(() => new Promise((r) => requestAnimationFrame(() => requestAnimationFrame(r))));
  const legend = await page.evaluate(() => window.__critbox.lastDraw.series.map((s) => s.label));
  assert.deepEqual(legend, [...cfg.variants.map((v) => v.label), 'QAC, small actor step']);
  await shoot(page, 'variant-added.png');

  // Duplicate: a copy right after it, with a label of its own.
  await page.click(`#variants > li:nth-child(${n + 1}) button[data-duplicate]`);
  const copyOf = await page.evaluate((k) => window.__critbox.state.config.variants[k + 1], n);
  assert.deepEqual(copyOf, { label: 'QAC, small actor step (copy)', learner: { family: 'qac', actor_step: 0.05 } });
  // Dropping an override goes back to the shared value.
  await page.click(`#variants > li:nth-child(${n + 2}) button[data-drop="variants[${n + 1}].learner.actor_step"]`);
  assert.deepEqual(await page.evaluate((k) => window.__critbox.state.config.variants[k + 1], n),
    { label: 'QAC, small actor step (copy)', learner: { family: 'qac' } });

  await page.click(`#variants > li:nth-child(${n + 2}) button.remove`);
  await page.click(`#variants > li:nth-child(${n + 1}) button.remove`);
  assert.equal(await page.locator('#variants > li').count(), n);
  const after = await page.evaluate(() => window.__critbox.state.config.variants);
  assert.deepEqual(after, cfg.variants);
  assert.deepEqual(problems, []);
  await context.close();
});

test('a missing wasm file is reported and Train stays off with the reason', async () => {
  const { page, context } = await openPage(env, {
    before: async (_page, ctx) => {
      await ctx.route('**/pkg/critbox_wasm_bg.wasm', (route) => route.fulfill({ status: 404, body: 'gone' }));
    },
  });
  const messages = await page.locator('#messages .msg p').allTextContents();
  assert.ok(messages.some((m) => /WebAssembly/.test(m) && /critbox_wasm_bg\.wasm/.test(m)), messages.join('\n'));
  assert.equal(await page.isDisabled('#train'), true);
  const reason = (await page.textContent('#run-reason')).trim();
  assert.match(reason, /WebAssembly module is not loaded/);
  assert.equal((await trainButtonAx(page)).description.trim(), reason);
  // The form still works: the preset is shown and can be edited.
  assert.ok((await page.inputValue('#title')).length > 0);
  await shoot(page, 'wasm-missing.png');
  await context.close();
});

test('keyboard: tabs move with the arrow keys, Train starts from the keyboard, every button has a name', async () => {
  const { page, context, problems } = await openPage(env);
  await page.fill('#seeds', '2');
  await page.fill('#steps', '1000');
  await page.waitForFunction(() => !document.getElementById('train').disabled);
  // Every button and every control has an accessible name.
  const nameless = await page.evaluate(() => [...document.querySelectorAll('button')]
    .filter((b) => !(b.getAttribute('aria-label') || b.textContent).trim()).map((b) => b.id || b.outerHTML.slice(0, 80)));
  assert.deepEqual(nameless, []);
  const unlabelled = await page.evaluate(() => [...document.querySelectorAll('input, select, textarea, progress')]
    .filter((el) => !el.labels || el.labels.length === 0).map((el) => el.id || el.outerHTML.slice(0, 80)));
  assert.deepEqual(unlabelled, []);
  // The view tabs: arrow keys, Home and End move the selection and the focus.
  await page.focus('#tab-results');
  await page.keyboard.press('ArrowRight');
  assert.equal(await page.evaluate(() => document.activeElement.id), 'tab-variance');
  assert.equal(await page.getAttribute('#tab-variance', 'aria-selected'), 'true');
  assert.equal(await page.isVisible('#panel-variance'), true);
  await page.keyboard.press('End');
  assert.equal(await page.evaluate(() => document.activeElement.id), 'tab-inspect');
  await page.keyboard.press('Home');
  assert.equal(await page.evaluate(() => document.activeElement.id), 'tab-results');
  assert.equal(await page.isVisible('#panel-inspect'), false);
  // A preset from the keyboard, then Train with Enter.
  await page.focus('#presets button[data-preset="cartpole-a2c-tiles.json"]');
  await page.keyboard.press('Enter');
  await page.waitForFunction(() => window.__critbox.state.presetFile === 'cartpole-a2c-tiles.json');
  await page.fill('#seeds', '1');
  await page.fill('#steps', '1000');
  await page.waitForFunction(() => !document.getElementById('train').disabled);
  await page.focus('#train');
  await page.keyboard.press('Enter');
  await waitForRunEnd(page, 60000);
  assert.equal(await page.evaluate(() => window.__critbox.state.run.status), 'done');
  assert.deepEqual(problems, []);
  await context.close();
});

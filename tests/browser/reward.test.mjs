// The reward editor: a formula is checked by the core as it is typed; an
// invalid one shows its error with the place marked, and the run button is
// disabled with that reason; a variant can train on a reward of its own.

import { test, before, after } from 'node:test';
import assert from 'node:assert/strict';
import { setUp, openPage, trainButtonAx, shoot, runToEnd } from './helpers.mjs';

let env;
before(async () => { env = await setUp(); });
after(async () => { await env?.close(); });

test('an invalid formula: error with its position, Train disabled and saying why', async () => {
  const { page, context, problems } = await openPage(env);
  await page.waitForFunction(() => !document.getElementById('train').disabled);
  await page.click('label[for="f-reward-mode-bonus"]');
  await page.waitForSelector('#f-reward-formula');
  // "row +" ends early: the error is at the end of the text.
  await page.fill('#f-reward-formula', 'row + ');
  await page.waitForFunction(() => document.getElementById('f-reward-formula-status').classList.contains('bad'));
  const status = await page.textContent('#f-reward-formula-status .formula-error');
  assert.match(status, /^column \d+: /, status);
  assert.equal(await page.getAttribute('#f-reward-formula', 'aria-invalid'), 'true');
  await page.waitForFunction(() => document.getElementById('train').disabled);
  const reason = (await page.textContent('#run-reason')).trim();
  assert.match(reason, /^reward\.formula: column \d+: /, reason);
  const ax = await trainButtonAx(page);
  assert.equal(ax.disabled, true);
  assert.equal(ax.description.trim(), reason);

  // An unknown name: the marked span is exactly that name, and the hint names the close one.
  await page.fill('#f-reward-formula', 'if rwo > 2 then 1 else 0');
  await page.waitForFunction(() => /unknown name/.test(document.getElementById('f-reward-formula-status').textContent));
  assert.equal(await page.textContent('#f-reward-formula-status mark'), 'rwo');
  assert.match(await page.textContent('#f-reward-formula-status .formula-error'), /^column 4: .*row/);
  await shoot(page, 'formula-error.png');

  // Fixed: the core's reading of it is shown and Train comes back.
  await page.fill('#f-reward-formula', 'if row > 2 then 1 else 0');
  await page.waitForFunction(() => document.getElementById('f-reward-formula-status').classList.contains('ok'));
  await page.waitForFunction(() => !document.getElementById('train').disabled);
  assert.deepEqual(await page.evaluate(() => window.__critbox.state.config.reward), { mode: 'bonus', formula: 'if row > 2 then 1 else 0' });
  // A name from the list goes in at the cursor.
  await page.click('#f-reward-formula');
  await page.keyboard.press('End');
  await page.click('#reward-editor details.names summary');
  await page.type('#f-reward-formula', ' + ');
  await page.click('#reward-editor button.name[data-insert="col"]');
  assert.equal(await page.inputValue('#f-reward-formula'), 'if row > 2 then 1 else 0 + col');
  // Back to the task reward: no reward object, Train on.
  await page.click('label[for="f-reward-mode-base"]');
  await page.waitForFunction(() => !document.getElementById('train').disabled);
  assert.equal(await page.evaluate(() => window.__critbox.state.config.reward), undefined);
  assert.deepEqual(problems, []);
  await context.close();
});

test('a variant with a reward of its own: a potential, checked as it is typed, then trained', async () => {
  const { page, context, problems } = await openPage(env);
  await page.waitForFunction(() => !document.getElementById('train').disabled);
  await page.fill('#seeds', '2');
  await page.fill('#steps', '2000');
  await page.selectOption('#f-variants-1-add', '#reward');
  await page.click('label[for="f-variants-1-reward-mode-potential"]');
  await page.fill('#f-variants-1-reward-formula', '-abs(row - 5) - abs(col - 10)');
  await page.waitForFunction(() => document.getElementById('f-variants-1-reward-formula-status').classList.contains('ok'));
  assert.deepEqual(await page.evaluate(() => window.__critbox.state.config.variants[1].reward),
    { mode: 'potential', formula: '-abs(row - 5) - abs(col - 10)' });
  // A potential may not read the next state: the core says so, at the prime.
  await page.fill('#f-variants-1-reward-formula', "-abs(row' - 5)");
  await page.waitForFunction(() => document.getElementById('f-variants-1-reward-formula-status').classList.contains('bad'));
  assert.match(await page.textContent('#run-reason'), /^variants\[1\]\.reward\.formula: /);
  await page.fill('#f-variants-1-reward-formula', '-abs(row - 5) - abs(col - 10)');
  await runToEnd(page);
  const s = await page.evaluate(() => window.__critbox.state.summary);
  assert.equal(s.variants.length, 3);
  assert.ok(s.variants.every((v) => typeof v.final_return.mean === 'number'));
  assert.deepEqual(problems, []);
  await context.close();
});

test('a bonus that teaches loops: the shaped curve rises, the task return does not, the table says so', async () => {
  const { page, context, problems } = await openPage(env);
  await page.click('#presets button[data-preset="rover-loop-bonus.json"]');
  await page.waitForFunction(() => window.__critbox.state.presetFile === 'rover-loop-bonus.json');
  await page.fill('#seeds', '4');
  await page.fill('#steps', '20000');
  await runToEnd(page);
  const s = await page.evaluate(() => window.__critbox.state.summary);
  const flagged = s.variants.map((v) => v.hacking.flag);
  assert.deepEqual(flagged, [false, true], 'the core flags the bonus variant only');
  // The table shows the warning on the bonus variant's row only.
  const warnings = await page.locator('#scores-body tr.hacking').allTextContents();
  assert.equal(warnings.length, 1);
  assert.match(warnings[0], /Possible reward hacking: .*\(\d+ of 4 seeds\)/);
  // The shaped curve is drawn from the shaped returns: for the task-reward
  // variant it equals the task-return curve (the reward is the task's own).
  await page.click('label[for=stat-shaped]');
  await page.waitForFunction(() => window.__critbox.lastDraw.stat === 'shaped');
  const [shaped, base] = await page.evaluate(() => [
    Array.from(window.__critbox.state.curves.curves[0]),
    window.__critbox.state.summary.variants[0].curve.mean,
  ]);
  const shapedMeans = shaped.filter((_, i) => i % 5 === 1);
  assert.deepEqual(shapedMeans.map((x) => (Number.isFinite(x) ? x : null)), base);
  await shoot(page, 'reward-hacking.png', { scrollBench: 300 });
  assert.deepEqual(problems, []);
  await context.close();
});

// The user's own tasks in the page: the formula-task editor starts from a
// runnable model, checks every formula live and names the field and column
// of a mistake; a state variable renamed carries its update formula; the
// table editor reads pasted CSV and names a pair whose probabilities do not
// sum to 1; an own-task preset trains in the page with the CLI's numbers,
// and the task travels whole in the share link.

import { test, before, after } from 'node:test';
import assert from 'node:assert/strict';
import { execFile } from 'node:child_process';
import { mkdtemp, writeFile } from 'node:fs/promises';
import os from 'node:os';
import path from 'node:path';
import { promisify } from 'node:util';
import { setUp, openPage, runToEnd, outDir, nextFrame, repoRoot } from './helpers.mjs';

const CLI = process.env.CRITBOX_CLI || path.join(repoRoot, 'target', 'release', 'critbox');
let env;
before(async () => { env = await setUp(); });
after(async () => { await env.close(); });

/** Screenshot of the page with the sheet scrolled to `selector` (the top of the task group by default). */
async function shootTask(page, name, selector = '#task-group') {
  await page.evaluate((sel) => document.querySelector(sel).scrollIntoView({ block: sel === '#task-group' ? 'start' : 'center' }), selector);
  await nextFrame(page);
  await page.screenshot({ path: path.join(outDir, name) });
}

const config = (page) => page.evaluate(() => window.__critbox.state.config);

test('the formula-task editor checks formulas live and keeps updates with their variables', async () => {
  const { page, context, problems } = await openPage(env);
  await page.selectOption('#task-kind', 'formula');
  await page.waitForFunction(() => window.__critbox.state.config.task.kind === 'formula' && window.__critbox.state.check.ok);
  const task = (await config(page)).task;
  assert.deepEqual(task.state.map((v) => v.name), ['level', 'demand'], 'starts from the starter model');
  // Every formula field is drawn and reads as valid.
  const fields = await page.$$eval('textarea[data-task-formula]', (t) => t.map((x) => x.dataset.taskFormula));
  assert.deepEqual(fields, ['let[0].formula', 'update.level', 'update.demand', 'terminal', 'reward']);
  await shootTask(page, 'own-task-formula-editor.png');
  await shootTask(page, 'own-task-formula-dynamics.png', 'textarea[data-task-formula="update.demand"]');

  // A misspelt name: the field, the column and the nearest name.
  const update = page.locator('textarea[data-task-formula="update.level"]');
  await update.fill('level + dt * chnage');
  const status = page.locator(`#${await update.getAttribute('id')}-status`);
  await page.waitForFunction(() => !window.__critbox.state.check.ok);
  assert.match(await status.textContent(), /column 14: unknown name `chnage` \(did you mean change\?\)/);
  const reason = await page.textContent('#run-reason');
  assert.match(reason, /task\.update\.level: column 14: unknown name `chnage`/);
  await shootTask(page, 'own-task-formula-error.png', 'textarea[data-task-formula="update.level"]');
  await update.fill('level + dt * change');
  await page.waitForFunction(() => window.__critbox.state.check.ok);

  // A new variable, renamed: its update formula follows the name.
  await page.click('button[data-task-add="state"]');
  await page.waitForFunction(() => window.__critbox.state.config.task.state.length === 3);
  const name = page.locator('[data-path="task.state[2].name"]');
  await name.fill('wear');
  await page.waitForFunction(() => 'wear' in window.__critbox.state.config.task.update);
  const t2 = (await config(page)).task;
  assert.equal(t2.update.wear, 'x3', 'the new variable keeps its value until its formula changes');
  assert.ok(!('x3' in t2.update));
  await page.locator('textarea[data-task-formula="update.wear"]').fill('wear + 0.01 * inflow');
  await page.waitForFunction(() => window.__critbox.state.check.ok);
  // Controls instead of actions: the reward's `inflow` is then unknown until a control has that name.
  await page.check('#task-action-kind-controls');
  await page.waitForFunction(() => Array.isArray(window.__critbox.state.config.task.controls));
  await page.fill('[data-path="task.controls[0].name"]', 'inflow');
  await page.fill('[data-path="task.controls[0].low"]', '0');
  await page.fill('[data-path="task.controls[0].high"]', '0.08');
  // The task is sound; what is left is about the variants (QAC needs discrete actions).
  await page.waitForFunction(() => !/^task\./.test(window.__critbox.state.check.message || '')
    && document.querySelectorAll('.own-task .formula-status.bad').length === 0);
  assert.match(await page.textContent('#run-reason'), /"qac" needs discrete actions/);
  assert.equal(await page.isVisible('#task-problems li'), false);
  assert.deepEqual(problems, []);
  await context.close();
});

test('the table editor reads CSV and names a pair whose probabilities do not sum to 1', async () => {
  const { page, context, problems } = await openPage(env);
  await page.selectOption('#task-kind', 'table');
  await page.waitForFunction(() => window.__critbox.state.config.task.kind === 'table' && window.__critbox.state.check.ok);
  const csv = page.locator('[data-path="task.rows"]');
  const text = await csv.inputValue();
  assert.match(text, /^from,action,to,probability,reward\n/);
  // One probability changed: the pair and its sum are named.
  await csv.fill(text.replace('short,wait,long,0.4,-1', 'short,wait,long,0.5,-1'));
  await page.waitForFunction(() => !window.__critbox.state.check.ok);
  assert.match(await page.textContent('#task-problems'), /task\.rows: state `short`, action `wait`: probabilities sum to 1\.1, not 1/);
  await shootTask(page, 'own-task-table-error.png', '#task-problems');
  // A line that is not CSV of numbers: the line and column.
  await csv.fill('from,action,to,probability,reward\nempty,wait,short,half,0\n');
  const statusId = `${await csv.getAttribute('id')}-status`;
  await page.waitForFunction((id) => /csv line 2: column `probability`: `half` is not a number/.test(document.getElementById(id).textContent), statusId);
  await csv.fill(text);
  await page.waitForFunction(() => window.__critbox.state.check.ok);
  await shootTask(page, 'own-task-table-editor.png', '[data-path="task.rows"]');
  assert.deepEqual(problems, []);
  await context.close();
});

test('an own-task preset trains in the page with the CLI numbers and travels in the link', async () => {
  const { page, context, problems } = await openPage(env, { permissions: ['clipboard-read', 'clipboard-write'] });
  await page.click('#presets button[data-preset="greenhouse-night-heater.json"]');
  await page.waitForFunction(() => window.__critbox.state.presetFile === 'greenhouse-night-heater.json');
  await page.fill('#seeds', '3');
  await page.fill('#steps', '4000');
  await runToEnd(page);
  const { configJson, summary } = await page.evaluate(() => ({
    configJson: window.__critbox.state.run.configJson, summary: window.__critbox.state.summary,
  }));
  assert.equal(summary.task, 'formula');
  const dir = await mkdtemp(path.join(os.tmpdir(), 'critbox-'));
  const cfgPath = path.join(dir, 'config.json');
  await writeFile(cfgPath, configJson);
  const { stdout } = await promisify(execFile)(CLI, ['run', cfgPath], { maxBuffer: 1 << 26 });
  assert.deepEqual(summary, JSON.parse(stdout), 'page = CLI, bit for bit');
  // The share link carries the whole task.
  await page.click('#copy-link');
  await page.waitForFunction(() => /#v1\./.test(document.getElementById('share-url')?.value || ''));
  const link = await page.inputValue('#share-url');
  const task = await page.evaluate(() => window.__critbox.state.config.task);
  assert.deepEqual(problems, []);
  await context.close();
  const second = await openPage(env, { path: link.slice(link.indexOf('#')) });
  await second.page.waitForFunction(() => window.__critbox.state.check.ok);
  assert.deepEqual(await second.page.evaluate(() => window.__critbox.state.config.task), task);
  assert.deepEqual(second.problems, []);
  await second.context.close();
});

test('the table preset trains with the CLI numbers and shows its exact shaping audit by state name in Inspect', async () => {
  const { page, context, problems } = await openPage(env);
  await page.click('#presets button[data-preset="machine-wear-table.json"]');
  await page.waitForFunction(() => window.__critbox.state.presetFile === 'machine-wear-table.json');
  await page.fill('#seeds', '2');
  await page.fill('#steps', '3000');
  await runToEnd(page);
  const { configJson, summary } = await page.evaluate(() => ({
    configJson: window.__critbox.state.run.configJson, summary: window.__critbox.state.summary,
  }));
  const dir = await mkdtemp(path.join(os.tmpdir(), 'critbox-'));
  await writeFile(path.join(dir, 'config.json'), configJson);
  const { stdout } = await promisify(execFile)(CLI, ['run', path.join(dir, 'config.json')], { maxBuffer: 1 << 26 });
  assert.deepEqual(summary, JSON.parse(stdout), 'page = CLI on the table task too');
  await page.click('#tab-inspect');
  await page.selectOption('#inspect-variant', '1');
  await page.click('#inspect-go');
  await page.waitForFunction(() => document.getElementById('audit-list').children.length > 0, null, { timeout: 60000 });
  const items = await page.$$eval('#audit-list li', (l) => l.map((x) => x.textContent));
  assert.ok(items.includes("worn: task's best run; shaped service"), items.join(' | '));
  assert.match(await page.textContent('#value-note'), /Shaping audit: in 2 states the best action .* costs 8\.1/);
  await nextFrame(page);
  await page.screenshot({ path: path.join(outDir, 'own-task-table-audit.png') });
  assert.deepEqual(problems, []);
  await context.close();
});

// Shared set-up for the browser tests: the page served by `critbox serve`
// (the server users get) on 127.0.0.1, headless Chromium (Debian's, never a
// downloaded one) and a page with its console watched.

import { mkdir } from 'node:fs/promises';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import { chromium } from 'playwright-core';
import { startServe } from '../serve.mjs';

export const repoRoot = process.env.CRITBOX_ROOT || path.resolve(path.dirname(fileURLToPath(import.meta.url)), '..', '..');
export const outDir = path.join(process.env.CRITBOX_TEST_OUTPUT || path.join(repoRoot, 'test-output'), 'browser');

/** Start the server and the browser; returns {server, browser, close()}. */
export async function setUp() {
  await mkdir(outDir, { recursive: true });
  const server = await startServe(path.join(repoRoot, 'web'));
  const browser = await chromium.launch({
    executablePath: process.env.CRITBOX_CHROMIUM || '/usr/bin/chromium',
    args: ['--headless', '--no-sandbox', '--disable-gpu', '--disable-background-networking',
      '--disable-component-update', '--disable-sync', '--no-first-run'],
  });
  return {
    server,
    browser,
    close: async () => { await browser.close(); await server.close(); },
  };
}

/**
 * Open the page at 1280×720 and wait until it has loaded its preset and the
 * wasm module. Returns {page, context, problems, requests}: problems collects
 * console errors and uncaught page errors, requests every URL asked for.
 * Options: colorScheme, before(page, context) (called before loading),
 * path (appended to the server's address, e.g. a fragment), permissions.
 */
export async function openPage(env, { colorScheme = 'light', before, path: at = '', permissions = [] } = {}) {
  const context = await env.browser.newContext({ viewport: { width: 1280, height: 720 }, colorScheme, permissions });
  const page = await context.newPage();
  const problems = [];
  const requests = [];
  page.on('console', (m) => { if (m.type() === 'error') problems.push(`console: ${m.text()}`); });
  page.on('pageerror', (e) => problems.push(`pageerror: ${e.message}`));
  page.on('worker', (w) => w.on('console', (m) => { if (m.type() === 'error') problems.push(`worker console: ${m.text()}`); }));
  context.on('request', (r) => requests.push(r.url()));
  if (before) await before(page, context);
  await page.goto(env.server.url + at);
  await page.waitForFunction(() => window.__critbox && window.__critbox.ready, null, { timeout: 30000 });
  return { page, context, problems, requests };
}

/** The Train button's accessible name and description, as Chromium's
 * accessibility tree computes them. */
export async function trainButtonAx(page) {
  const cdp = await page.context().newCDPSession(page);
  const { nodes } = await cdp.send('Accessibility.getFullAXTree');
  await cdp.detach();
  const node = nodes.find((n) => n.role?.value === 'button' && n.name?.value === 'Train');
  if (!node) return null;
  const prop = (name) => node.properties?.find((p) => p.name === name)?.value?.value;
  return { description: node.description?.value ?? '', disabled: prop('disabled') === true };
}

/** Count pixels in the canvas plot area within `tol` (per channel) of a css colour '#rrggbb'. */
export async function countColourInPlot(page, colour, tol = 24) {
  return page.evaluate(({ colour, tol }) => {
    const d = window.__critbox.lastDraw;
    const canvas = document.getElementById('curves');
    const ctx = canvas.getContext('2d');
    const { x, y, w, h } = d.plot;
    const s = d.dpr;
    const img = ctx.getImageData(Math.round(x * s), Math.round(y * s), Math.round(w * s), Math.round(h * s)).data;
    const want = [1, 3, 5].map((i) => parseInt(colour.slice(i, i + 2), 16));
    let n = 0;
    for (let i = 0; i < img.length; i += 4) {
      if (Math.abs(img[i] - want[0]) <= tol && Math.abs(img[i + 1] - want[1]) <= tol && Math.abs(img[i + 2] - want[2]) <= tol) n++;
    }
    return n;
  }, { colour, tol });
}

/** Wait for two animation frames (a scheduled redraw has happened). */
export function nextFrame(page) {
  return page.evaluate(() => new Promise((r) => requestAnimationFrame(() => requestAnimationFrame(r))));
}

/** Wait until the current run is over (done, cancelled or interrupted). */
export async function waitForRunEnd(page, timeout = 180000) {
  await page.waitForFunction(() => {
    const r = window.__critbox.state.run;
    return r && (r.status === 'done' || r.status === 'cancelled');
  }, null, { timeout, polling: 200 });
}

/** Press Train once it is enabled and wait for the run to finish. */
export async function runToEnd(page, timeout = 180000) {
  await page.waitForFunction(() => !document.getElementById('train').disabled);
  await page.click('#train');
  await page.waitForFunction(() => window.__critbox.state.run, null, { timeout: 10000 });
  await waitForRunEnd(page, timeout);
  await nextFrame(page);
}

/**
 * Screenshot into the test-output folder, the settings sheet scrolled to its
 * top and the results bench to `scrollBench` px.
 */
export async function shoot(page, name, { scrollBench = 0 } = {}) {
  await page.evaluate((y) => {
    const sheet = document.getElementById('experiment');
    if (sheet) sheet.scrollTop = 0;
    const bench = document.querySelector('.bench');
    if (bench) bench.scrollTop = y;
  }, scrollBench);
  await nextFrame(page);
  await page.screenshot({ path: path.join(outDir, name) });
}

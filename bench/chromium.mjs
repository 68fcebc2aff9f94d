// Bench driver: headless Chromium (Debian's /usr/bin/chromium, never a
// downloaded browser) on bench/page.html, served from the repository root by
// `critbox serve` on 127.0.0.1. Prints one JSON object on stdout.
// usage: node bench/chromium.mjs single CONFIG.json STEPS [RUNS]
//        node bench/chromium.mjs pool CONFIG.json WORKERS[,WORKERS...] [RUNS]
//        node bench/chromium.mjs page CONFIG.json - [RUNS]
// `page` opens the page itself (web/index.html) with the config in a share
// link, presses Train and times the whole run to its summary (a study's two
// stages included), as a user would see it.
// RUNS measurements (default 1) in one browser, printed as a JSON array; for
// pool, each run measures every listed worker count in turn (paired rounds).
import path from 'node:path';
import { spawn } from 'node:child_process';
import { createRequire } from 'node:module';
import { fileURLToPath } from 'node:url';

const root = path.resolve(path.dirname(fileURLToPath(import.meta.url)), '..');
const require = createRequire(path.join(root, 'tests/browser/package.json'));
const { chromium } = require('playwright-core');

const [mode, configPath, arg, runsArg] = process.argv.slice(2);
const runs = Math.max(1, Number(runsArg || 1));
if (!['single', 'pool', 'page'].includes(mode) || !configPath || !arg) {
  console.error('usage: node bench/chromium.mjs single|pool|page CONFIG.json STEPS|WORKERS|-');
  process.exit(2);
}

const cli = process.env.CRITBOX_CLI || path.join(root, 'target/release/critbox');
const server = spawn(cli, ['serve', '--root', root, '--port', '0'], { stdio: ['ignore', 'pipe', 'inherit'] });
const base = await new Promise((resolve, reject) => {
  let buf = '';
  server.stdout.on('data', (d) => {
    buf += d;
    const m = buf.match(/http:\/\/127\.0\.0\.1:\d+/);
    if (m) resolve(m[0]);
  });
  server.on('exit', (code) => reject(new Error(`critbox serve exited (${code}) before listening`)));
});

let browser;
try {
  browser = await chromium.launch({
    executablePath: process.env.CRITBOX_CHROMIUM || '/usr/bin/chromium',
    args: ['--headless', '--no-sandbox', '--disable-gpu', '--disable-background-networking',
      '--disable-component-update', '--disable-sync', '--no-first-run'],
  });
  const page = await browser.newPage();
  const pageErrors = [];
  page.on('pageerror', (e) => pageErrors.push(String(e)));
  if (mode === 'page') {
    const { readFileSync } = await import('node:fs');
    const config = JSON.parse(readFileSync(configPath, 'utf8'));
    const out = [];
    for (let r = 0; r < runs; r++) {
      await page.goto(`${base}/web/index.html`);
      await page.waitForFunction(() => window.__critbox && window.__critbox.ready, null, { timeout: 30000 });
      const hash = await page.evaluate(async (c) => (await import('/web/js/share.js')).encodeConfig(c), config);
      await page.goto(`${base}/web/index.html${hash}`);
      await page.waitForFunction(() => window.__critbox && window.__critbox.ready && window.__critbox.state.check.ok, null, { timeout: 30000 });
      const seconds = await page.evaluate(() => new Promise((resolve) => {
        const t0 = performance.now();
        document.getElementById('train').click();
        const poll = () => {
          const run = window.__critbox.state.run;
          if (run && run.status === 'done' && window.__critbox.state.summary) resolve((performance.now() - t0) / 1000);
          else setTimeout(poll, 20);
        };
        poll();
      }));
      out.push({ seconds, jobs: await page.evaluate(() => window.__critbox.state.run.jobs) });
    }
    if (pageErrors.length) throw new Error(`the page failed: ${pageErrors.join('; ')}`);
    console.log(JSON.stringify(out));
    process.exit(0);
  }
  await page.goto(`${base}/bench/page.html`);
  await page.waitForFunction(() => window.__bench, null, { timeout: 20000 });
  const url = `${base}/${path.relative(root, path.resolve(configPath))}`;
  const out = [];
  for (let r = 0; r < runs; r++) {
    if (mode === 'single') {
      out.push(await page.evaluate(([u, n]) => window.__bench.single(u, n), [url, Number(arg)]));
    } else {
      for (const workers of arg.split(',').map(Number)) {
        out.push(await page.evaluate(([u, n]) => window.__bench.pool(u, n), [url, workers]));
      }
    }
  }
  if (pageErrors.length) throw new Error(`the bench page failed: ${pageErrors.join('; ')}`);
  console.log(JSON.stringify(out));
} finally {
  if (browser) await browser.close();
  server.kill();
}

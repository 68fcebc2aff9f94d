// The bench runner behind scripts/bench: runs every workload natively
// (`critbox bench`), as WebAssembly under Node (bench/node.mjs) and in headless
// Chromium (bench/chromium.mjs), the two peers (bench/peer.py: NumPy per step,
// and the same algorithm compiled per step by Numba) on W1 and W2, W4 through
// the page's worker pool with 1 and 2 workers, W1's resident memory at 1 M and
// 10 M steps, and the page's weight (web/pkg's .wasm, raw and gzipped, and
// dist/critbox.html when it is built). The host's speed drifts by tens of percent
// from one minute to the next, so measurements are taken in rounds (one run
// of each kind per round, back to back) and every ratio is the median over
// rounds of the ratio within a round; speeds are medians over rounds. Prints
// a table against the targets and writes the JSON file.
// usage: node bench/run.mjs [--quick] [--out FILE] [--python PY]
import fs from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { execFileSync } from 'node:child_process';
import { gzipSync, constants as zlibConstants } from 'node:zlib';
import { fileURLToPath } from 'node:url';

const root = path.resolve(path.dirname(fileURLToPath(import.meta.url)), '..');
const args = process.argv.slice(2);
const quick = args.includes('--quick');
const opt = (name, dflt) => { const i = args.indexOf(name); return i >= 0 && args[i + 1] ? args[i + 1] : dflt; };
const outPath = path.resolve(opt('--out', path.join(root, 'bench/results.json')));
const python = opt('--python', path.join(root, 'bench/.venv/bin/python'));
const cli = process.env.CRITBOX_CLI || path.join(root, 'target/release/critbox');

// Steps per measurement and runs per median. Sized so a quick run stays under
// 2 minutes on a loaded 2-core machine; the full run gives steadier medians.
const S = quick
  ? { runs: 3, w4runs: 2, native: { w1: 300000, w2: 10000, w3: 300000, w1f: 300000 }, wasm: { w1: 300000, w2: 10000, w3: 300000, w1f: 300000 },
      peer: { w1: 3000, w2: 1500 }, jit: { w1: 300000, w2: 10000 }, rss: [300000, 3000000] }
  : { runs: 5, w4runs: 3, native: { w1: 2000000, w2: 60000, w3: 2000000, w1f: 2000000 }, wasm: { w1: 2000000, w2: 60000, w3: 2000000, w1f: 2000000 },
      peer: { w1: 20000, w2: 6000 }, jit: { w1: 2000000, w2: 60000 }, rss: [1000000, 10000000] };

// W1f is W1 on cart-pole restated as a formula task (bench/w1-formula.json).
const cfg = (w) => path.join(root, `bench/${w === 'w1f' ? 'w1-formula' : w}.json`);
const median = (xs) => { const s = [...xs].sort((a, b) => a - b); const m = s.length >> 1; return s.length % 2 ? s[m] : (s[m - 1] + s[m]) / 2; };
const json = (cmd, argv) => JSON.parse(execFileSync(cmd, argv, { cwd: root, encoding: 'utf8', stdio: ['ignore', 'pipe', 'inherit'], maxBuffer: 1 << 24 }));
const log = (m) => process.stderr.write(`bench: ${m}\n`);

const loadStart = os.loadavg();
const raw = {};
const med = {};
const pairs = {};
const pairedMedian = (a, b) => median(a.map((x, i) => x / b[i]));
for (const w of ['w1', 'w2', 'w3', 'w1f']) {
  const peers = w === 'w1' || w === 'w2';
  log(`${w}: ${S.runs} rounds of native (${S.native[w]} steps), wasm under Node and in headless Chromium (${S.wasm[w]} steps)`
    + (peers ? `, NumPy peer (${S.peer[w]} steps), compiled (Numba) peer (${S.jit[w]} steps)` : ''));
  const r = { native: [], node: [], chromium: [] };
  if (peers) { r.numpy = []; r.jit = []; }
  for (let k = 0; k < S.runs; k++) {
    r.native.push(json(cli, ['bench', cfg(w), '--steps', String(S.native[w])]).steps_per_sec);
    r.node.push(json('node', [path.join(root, 'bench/node.mjs'), cfg(w), String(S.wasm[w])]).steps_per_sec);
    // Two runs in one browser, the first untimed: the engine's optimised code
    // is in place after it, as it is a second into any run on the page.
    r.chromium.push(json('node', [path.join(root, 'bench/chromium.mjs'), 'single', cfg(w), String(S.wasm[w]), '2'])[1].steps_per_sec);
    if (r.numpy) r.numpy.push(json(python, [path.join(root, 'bench/peer.py'), w, String(S.peer[w])]).steps_per_sec);
    if (r.jit) r.jit.push(json(python, [path.join(root, 'bench/peer.py'), `${w}-jit`, String(S.jit[w])]).steps_per_sec);
  }
  raw[w] = r;
  med[w] = Object.fromEntries(Object.entries(r).map(([k, v]) => [k, median(v)]));
  pairs[w] = {
    node_over_native: pairedMedian(r.node, r.native),
    chromium_over_native: pairedMedian(r.chromium, r.native),
    ...(r.numpy ? { native_over_numpy: pairedMedian(r.native, r.numpy) } : {}),
    ...(r.jit ? { native_over_jit: pairedMedian(r.native, r.jit), chromium_over_jit: pairedMedian(r.chromium, r.jit) } : {}),
  };
}

log(`w4 through the page's worker pool: ${S.w4runs} rounds of 1 then 2 workers in one browser, after an untimed round`);
const w4all = json('node', [path.join(root, 'bench/chromium.mjs'), 'pool', cfg('w4'), '1,2', String(S.w4runs + 1)]);
raw.w4_warmup_seconds = w4all.slice(0, 2).map((r) => r.seconds);
const w4runs = w4all.slice(2);
for (const r of w4runs) if (r.errors.length) throw new Error(`W4 with ${r.workers} worker(s): ${r.errors.join('; ')}`);
const w4 = {};
for (const workers of [1, 2]) {
  const runs = w4runs.filter((r) => r.workers === workers);
  w4[workers] = median(runs.map((r) => r.seconds));
  w4[`first_${workers}`] = median(runs.map((r) => r.first_progress_seconds));
  w4[`advance_${workers}`] = median(runs.map((r) => r.advance_seconds));
  w4[`advance_max_${workers}`] = median(runs.map((r) => r.advance_max_seconds));
  raw[`w4_${workers}_workers_advance_seconds`] = runs.map((r) => r.advance_seconds);
  raw[`w4_${workers}_workers_seconds`] = runs.map((r) => r.seconds);
}
w4.speedup = pairedMedian(raw.w4_1_workers_seconds, raw.w4_2_workers_seconds);

log('w5: a study (2 variants x 8 points x 10 tuning seeds, then 10 fresh seeds, 30 000 rover steps) through the page, Train to summary');
const w5runs = json('node', [path.join(root, 'bench/chromium.mjs'), 'page', cfg('w5'), '-', String(quick ? 1 : 3)]);
raw.w5_seconds = w5runs.map((r) => r.seconds);
const w5 = median(raw.w5_seconds);

log(`w1 resident memory at ${S.rss.join(' and ')} steps (native)`);
const rssRun = json(cli, ['bench', cfg('w1'), '--steps', String(S.rss[1]), '--rss-at', S.rss.join(',')]);
const [rssA, rssB] = rssRun.rss.map((r) => r.rss_kib);

// The page's weight: what a visitor downloads (the .wasm, raw and as a server
// would gzip it) and the single file, when scripts/build-single has made it.
const gz = (buf) => gzipSync(buf, { level: zlibConstants.Z_BEST_COMPRESSION }).length;
const wasmBytes = fs.readFileSync(path.join(root, 'web/pkg/critbox_wasm_bg.wasm'));
const singlePath = path.join(root, 'dist/critbox.html');
const single = fs.existsSync(singlePath) ? fs.statSync(singlePath) : null;
const weight = {
  wasm_bytes: wasmBytes.length,
  wasm_gzip_bytes: gz(wasmBytes),
  single_file_bytes: single ? single.size : null,
};

const ratio = (a, b) => (a && b ? a / b : null);
const rows = [];
const row = (name, value, unit, target, ok) => rows.push({ name, value, unit, target, met: ok });
row('W1 native', med.w1.native / 1e6, 'M steps/s', '>= 3.0 (aim 4.5)', med.w1.native >= 3.0e6);
const j1 = pairs.w1.native_over_jit;
row('W1 native / compiled (Numba) peer', j1, 'x', '>= 1 (aim 1.5)', j1 >= 1);
row('W2 native', med.w2.native / 1e3, 'k steps/s', '>= 150', med.w2.native >= 150e3);
const j2 = pairs.w2.native_over_jit;
row('W2 native / compiled (Numba) peer, per step', j2, 'x', '>= 1', j2 >= 1);
for (const w of ['w1', 'w2', 'w3']) {
  const r = pairs[w].chromium_over_native;
  row(`${w.toUpperCase()} wasm in Chromium / native`, r, 'x', '>= 0.8', r >= 0.8);
}
const r1 = pairs.w1.native_over_numpy;
row('W1 native / NumPy peer', r1, 'x', '>= 100', r1 >= 100);
const r2 = pairs.w2.native_over_numpy;
row('W2 native / NumPy peer', r2, 'x', '>= 20', r2 >= 20);
row('W4 wall time, 2 workers', w4[2], 's', '< 0.4', w4[2] < 0.4);
const sp = w4.speedup;
row('W4 speed-up, 2 workers over 1', sp, 'x', '>= 1.85', sp >= 1.85);
row('W5 study in the page, Train to summary', w5, 's', '< 10', w5 < 10);
const growth = ratio(rssB, rssA) - 1;
row(`W1 resident memory growth ${S.rss[0]} -> ${S.rss[1]} steps`, growth * 100, '%', '<= 10', Math.abs(growth) <= 0.1);
row('WebAssembly size', weight.wasm_bytes / 1000, 'KB', '<= 600', weight.wasm_bytes <= 600e3);
row('WebAssembly size, gzipped', weight.wasm_gzip_bytes / 1000, 'KB', '<= 250', weight.wasm_gzip_bytes <= 250e3);
if (single) row('single file (dist/critbox.html)', single.size / 1000, 'KB', '<= 1000', single.size <= 1000e3);
// The user's own tasks: cart-pole written as formulas against the built-in task (issue 15).
const f1 = med.w1f.native / med.w1.native;
row('W1 on cart-pole as formulas / built-in, native', f1, 'x', '>= 0.5', f1 >= 0.5);
const f2 = med.w1f.chromium / med.w1.chromium;
row('W1 on cart-pole as formulas / built-in, Chromium', f2, 'x', '>= 0.5', f2 >= 0.5);

const fmt = (x) => (x == null ? '-' : x >= 100 ? x.toFixed(0) : x >= 1 ? x.toFixed(2) : x.toFixed(3));
console.log(`\nenvironment steps per second (median of ${S.runs} rounds${quick ? ', --quick' : ''}; `
  + 'ratios: median over rounds of the ratio within a round)');
console.log(['workload', 'native', 'wasm Node', 'wasm Chromium', 'NumPy peer', 'Numba peer', 'Node/native', 'Chromium/native',
  'native/NumPy', 'native/Numba'].join('\t'));
for (const w of ['w1', 'w2', 'w3', 'w1f']) {
  const m = med[w];
  const p = pairs[w];
  console.log([w.toUpperCase(), fmt(m.native), fmt(m.node), fmt(m.chromium), fmt(m.numpy), fmt(m.jit), fmt(p.node_over_native),
    fmt(p.chromium_over_native), fmt(p.native_over_numpy), fmt(p.native_over_jit)].join('\t'));
}
for (const w of ['w1', 'w2']) {
  const p = pairs[w];
  console.log(`${w.toUpperCase()} against the compiled per-step peer (Numba): native ${fmt(p.native_over_jit)} x, `
    + `Chromium ${fmt(p.chromium_over_jit)} x (peer ${fmt(med[w].jit)} steps/s)`);
}
console.log(`W4 (30 jobs x 50 000 steps, page worker pool in Chromium): 1 worker ${fmt(w4[1])} s, 2 workers ${fmt(w4[2])} s, `
  + `speed-up ${fmt(w4.speedup)} x `
  + `(first progress after ${fmt(w4.first_1)} s and ${fmt(w4.first_2)} s; in Run.advance, summed over the workers, `
  + `${fmt(w4.advance_1)} s and ${fmt(w4.advance_2)} s, the busiest of 2 workers ${fmt(w4.advance_max_2)} s)`);
console.log(`W5 (a study of 180 jobs x 30 000 rover steps in the page, two stages): ${fmt(w5)} s from Train to the summary`);
const [ra, rb] = rssRun.rss;
console.log(`page weight: ${fmt(weight.wasm_bytes / 1000)} KB of WebAssembly (${fmt(weight.wasm_gzip_bytes / 1000)} KB gzipped, level 9), `
  + (single ? `single file ${fmt(single.size / 1000)} KB` : 'single file not built (scripts/build-single)'));
const load = os.loadavg();
console.log(`load average (1, 5, 15 min): ${loadStart.map((x) => x.toFixed(2)).join(' ')} at the start, `
  + `${load.map((x) => x.toFixed(2)).join(' ')} at the end (${os.cpus().length} CPUs)`);
console.log(`W1 resident memory: ${rssA} KiB at ${S.rss[0]} steps, ${rssB} KiB at ${S.rss[1]} steps `
  + `(episode records taken after every chunk as a page worker does: ${ra.episodes} -> ${rb.episodes} episodes, `
  + `which the page's results keep at 32 B each: ${fmt(ra.episode_log_kib)} -> ${fmt(rb.episode_log_kib)} KiB)`);
console.log('\ntargets');
for (const r of rows) console.log(`${r.met ? 'met   ' : 'MISSED'}  ${r.name}: ${fmt(r.value)} ${r.unit} (target ${r.target})`);

const out = {
  schema: 1,
  quick,
  date: new Date().toISOString(),
  machine: { cpus: os.cpus().length, cpu: os.cpus()[0] && os.cpus()[0].model, loadavg_start: loadStart, loadavg: os.loadavg(), node: process.version },
  steps: S,
  steps_per_sec: med,
  ratios: pairs,
  w4_seconds: { workers_1: w4[1], workers_2: w4[2], speedup: w4.speedup, first_progress_1: w4.first_1, first_progress_2: w4.first_2,
    advance_1: w4.advance_1, advance_2: w4.advance_2, advance_max_2: w4.advance_max_2 },
  w5_seconds: w5,
  w1_rss_kib: { [S.rss[0]]: rssA, [S.rss[1]]: rssB },
  w1_rss_detail: rssRun,
  page_weight: weight,
  targets: rows,
  raw,
};
fs.writeFileSync(outPath, `${JSON.stringify(out, null, 2)}\n`);
console.log(`\nwrote ${path.relative(process.cwd(), outPath) || outPath}`);

// The "Inspect a trained policy" panel: pick a variant, a seed and a step;
// the probe (probe.js) re-trains that job in its own worker and the panel
// shows its values and policy (inspect.js) and plays episodes of it
// (rollout.js).

import { Probe } from './probe.js';
import { drawGridMap, drawStateList, drawSlice, sliceObservations } from './inspect.js';
import { drawFrame, frameCount, frameAt } from './rollout.js';
import { sizeCanvas } from './plot.js';
import { canvasPng, download, fileStem } from './export.js';
import { messageOf } from './wasm.js';
import { formatNumber, formatCount } from './numbers.js';

/**
 * @param {object} app {state, showError, colours(), palette(), font()}
 * @returns {{refresh(), draw(), stop()}}
 */
/** A study's chosen grid point per variant, from its summary (null outside a study). */
export function chosenOf(summary) {
  if (!summary || !summary.study) return null;
  return summary.variants.map((v) => (v.study && typeof v.study.chosen_point === 'number' ? v.study.chosen_point : 0));
}

export function createInspectView(app) {
  const $ = (id) => document.getElementById(id);
  const ui = {
    empty: $('inspect-empty'), bar: $('inspect-bar'), explain: $('inspect-explain'), views: $('inspect-views'),
    variant: $('inspect-variant'), seed: $('inspect-seed'), at: $('inspect-at'), go: $('inspect-go'), status: $('inspect-status'),
    valueTitle: $('value-title'), valueSource: $('value-source'), sliceX: $('slice-x'), sliceY: $('slice-y'), sliceZ: $('slice-z'),
    sliceXField: $('slice-x-field'), sliceYField: $('slice-y-field'), sliceZField: $('slice-z-field'),
    valueBox: $('value-box'), valueCanvas: $('value-map'), valueNote: $('value-note'), auditList: $('audit-list'),
    play: $('roll-play'), step: $('roll-step'), speed: $('roll-speed'), greedy: $('roll-greedy'), rollSeed: $('roll-seed'),
    rollNew: $('roll-new'), rollBox: $('roll-box'), rollCanvas: $('rollout'), rollPos: $('roll-pos'),
    pngValue: $('png-value'), pngRoll: $('png-roll'),
  };
  const probe = new Probe();
  /** What is being inspected: {configJson, info, variant, seed, steps, ready, critic, slice, scene, audit}. */
  let cur = null;
  let shownRun = null;
  let anim = { playing: false, t: 0, last: 0, raf: 0 };
  let serial = 0; // counts finished inspections (tests wait on it)

  // ------------------------------------------------------------ choosing

  function refresh() {
    const run = app.state.run;
    const have = !!run && !!run.configJson;
    ui.empty.hidden = have;
    ui.bar.hidden = !have;
    ui.explain.hidden = !have;
    if (!have) { ui.views.hidden = true; return; }
    if (shownRun === run && ui.variant.options.length === run.labels.length) return;
    shownRun = run;
    const v = Math.min(Number(ui.variant.value) || 0, run.labels.length - 1);
    ui.variant.replaceChildren(...run.labels.map((l, i) => new Option(l, String(i))));
    ui.variant.value = String(Math.max(0, v));
    ui.seed.replaceChildren(...Array.from({ length: run.seeds }, (_, s) => new Option(`seed ${s}`, String(s))));
  }

  async function go() {
    const run = app.state.run;
    const wasm = app.state.wasm;
    if (!run || !wasm) return;
    const variant = Number(ui.variant.value) || 0;
    const seed = Number(ui.seed.value) || 0;
    const frac = Number(ui.at.value);
    const steps = Math.round(run.steps * (Number.isFinite(frac) ? frac : 1));
    let info;
    try {
      info = JSON.parse(wasm.validateConfig(run.configJson));
    } catch (err) {
      app.showError(`inspecting: ${messageOf(err)}`);
      return;
    }
    stopAnim();
    ui.go.disabled = true;
    ui.status.textContent = `Training ${run.labels[variant]}, seed ${seed} to step ${formatCount(steps)}…`;
    probe.onProgress = (done, total) => {
      ui.status.textContent = `Training ${run.labels[variant]}, seed ${seed}: ${Math.floor((100 * done) / Math.max(1, total))}%`;
    };
    let ready;
    try {
      ready = await probe.train(run.configJson, run.tuningJobs + variant * run.seeds + seed, steps, chosenOf(app.state.summary));
    } catch (err) {
      ui.go.disabled = false;
      if (!/replaced|stopped/.test(messageOf(err))) {
        ui.status.textContent = '';
        app.showError(`inspecting ${run.labels[variant]}, seed ${seed}: ${messageOf(err)}`);
      }
      return;
    }
    ui.go.disabled = false;
    cur = { configJson: run.configJson, info, variant, seed, steps, ready, critic: null, slice: null, scene: null, audit: null, label: run.labels[variant] };
    ui.status.textContent = ready.status === 2
      ? `This seed failed before step ${formatCount(steps)}: ${ready.failure}`
      : `${run.labels[variant]}, seed ${seed}, after ${formatCount(ready.done)} steps.`;
    ui.views.hidden = ready.status === 2;
    if (ready.status === 2) return;
    setUpValueTools();
    computeAudit();
    await showValues();
    await newEpisode();
    serial += 1;
  }

  // ------------------------------------------------------------ values

  function isGrid() { return cur && cur.info.task_kind === 'grid' && Array.isArray(cur.info.grid_map); }
  function isFinite_() { return cur && cur.ready.states.length > 0; }

  function setUpValueTools() {
    const names = cur.info.state_names;
    const finite = isFinite_();
    ui.valueSource.hidden = !finite;
    const slice = !finite && names.length >= 1;
    ui.sliceXField.hidden = !slice;
    ui.sliceYField.hidden = !slice || names.length < 2;
    ui.sliceZField.hidden = !slice;
    if (slice) {
      const opts = () => names.map((n, i) => new Option(n, String(i)));
      ui.sliceX.replaceChildren(...opts());
      ui.sliceY.replaceChildren(...opts());
      ui.sliceX.value = String(Math.max(0, names.length - 2));
      ui.sliceY.value = String(names.length - 1);
      const z = [new Option('value (critic)', 'value')];
      const acts = cur.info.action_names;
      if (cur.info.continuous) acts.forEach((a, i) => z.push(new Option(`action: ${a}`, `a${i}`)));
      else acts.forEach((a, i) => z.push(new Option(`chance of ${a}`, `a${i}`)));
      ui.sliceZ.replaceChildren(...z);
      ui.sliceZ.value = cur.info.continuous ? 'a0' : 'value';
    }
  }

  function computeAudit() {
    cur.audit = null;
    const wasm = app.state.wasm;
    if (!isFinite_() || typeof wasm.audit !== 'function') return;
    const cfg = JSON.parse(cur.configJson);
    const shaped = (cfg.reward && cfg.reward.mode && cfg.reward.mode !== 'base')
      || (cfg.variants || []).some((v) => v.reward && v.reward.mode && v.reward.mode !== 'base');
    if (!shaped) return;
    try {
      const report = JSON.parse(wasm.audit(cur.configJson));
      cur.audit = (report.variants || [])[cur.variant] || report;
    } catch (err) {
      app.showError(`shaping audit: ${messageOf(err)}`);
    }
  }

  async function showValues() {
    if (!cur) return;
    const k = cur.info.state_names.length;
    const width = cur.ready.policyWidth;
    try {
      if (isFinite_()) {
        if (!cur.critic) cur.critic = await probe.query('inspect', { obs: cur.ready.states.slice() });
      } else {
        const ix = Number(ui.sliceX.value) || 0;
        const iy = k > 1 ? Number(ui.sliceY.value) || 0 : ix;
        const n = 36;
        const key = `${ix}/${iy}`;
        if (!cur.slice || cur.slice.key !== key) {
          const lo = cur.info.state_low;
          const hi = cur.info.state_high;
          const fixed = lo.map((l, d) => (l <= 0 && hi[d] >= 0 ? 0 : (l + hi[d]) / 2));
          const obs = sliceObservations(k, ix, iy, [lo[ix], hi[ix]], [lo[iy], hi[iy]], n, k > 1 ? n : 1, fixed);
          const data = await probe.query('inspect', { obs });
          cur.slice = { key, ix, iy, n, ny: k > 1 ? n : 1, data, fixed };
        }
      }
    } catch (err) {
      app.showError(`inspecting: ${messageOf(err)}`);
      return;
    }
    drawValues(width);
  }

  function drawValues(width = cur?.ready.policyWidth) {
    if (!cur || ui.views.hidden) return;
    if (isFinite_() ? !cur.critic : !cur.slice) return; // still asking the worker
    const box = ui.valueBox;
    const w = Math.floor(box.clientWidth);
    const h = Math.floor(box.clientHeight);
    if (w < 10 || h < 10) return;
    const dpr = window.devicePixelRatio || 1;
    sizeCanvas(ui.valueCanvas, w, h, dpr);
    const ctx = ui.valueCanvas.getContext('2d');
    const opts = { width: w, height: h, dpr, colours: app.colours(), palette: app.palette(), font: app.font() };
    const stride = 1 + width;
    const source = document.querySelector('input[name="value-source"]:checked')?.value || 'exact';
    const useExact = source === 'exact' && cur.ready.values.length > 0;
    const k = cur.info.state_names.length;
    let note = '';
    ui.auditList.replaceChildren();
    if (isFinite_()) {
      const n = cur.ready.states.length / k;
      const value = (s) => (useExact ? cur.ready.values[s] : cur.critic[s * stride]);
      const probs = (s) => Array.from(cur.critic.subarray(s * stride + 1, (s + 1) * stride));
      const valueLabel = useExact ? 'exact value of this policy (task reward)' : "critic's estimate";
      if (source === 'critic' && cur.critic.every((v, i) => i % stride !== 0 || Number.isNaN(v))) note = 'This learner keeps no state-value estimate; showing nothing for the critic.';
      if (source === 'exact' && !cur.ready.values.length) note = 'No exact model for this policy; showing the critic\'s estimate.';
      if (useExact && Array.from(cur.ready.values).every((v) => Number.isNaN(v))) note = 'The exact value could not be solved for this policy (it may never end an episode at this discount).';
      if (isGrid()) {
        const cells = new Map();
        for (let s = 0; s < n; s++) {
          const r = cur.ready.states[s * k];
          const c = cur.ready.states[s * k + 1];
          cells.set(`${r},${c}`, { value: value(s), probs: probs(s) });
        }
        const marks = new Set((cur.audit?.differing_states || []).map((d) => `${d.row},${d.col}`));
        drawGridMap(ctx, { map: cur.info.grid_map, cells, marks, valueLabel }, opts);
        if (cur.audit) {
          const diff = cur.audit.differing_states || [];
          note = (note ? `${note} ` : '') + (diff.length
            ? `Shaping audit: in ${diff.length} cell${diff.length === 1 ? '' : 's'} (dashed) the best action under this variant's reward differs from the task's own; following it costs ${formatNumber(Number(cur.audit.base_value_loss))} of task return from the start.`
            : `Shaping audit: this variant's reward leaves the best actions unchanged${cur.audit.potential_based ? ' (potential-based)' : ''}.`);
          ui.auditList.replaceChildren(...diff.map((d) => {
            const li = document.createElement('li');
            li.textContent = `row ${d.row}, column ${d.col}: task's best ${(d.base_actions || []).join('/')}; shaped ${(d.shaped_actions || []).join('/')}${d.reachable === false ? ' (not reached from the start)' : ''}`;
            return li;
          }));
        }
        ui.valueTitle.textContent = `Value and policy of ${cur.label}, seed ${cur.seed}`;
        ui.valueCanvas.setAttribute('aria-label', `Map of the floor coloured by ${valueLabel}, arrows for the policy's action probabilities${marks.size ? `; ${marks.size} cells marked by the shaping audit` : ''}`);
      } else {
        const states = [];
        const named = Array.isArray(cur.info.table_states) && cur.info.table_states.length === n ? cur.info.table_states : null;
        const stateLabel = (s) => (named ? named[s] : cur.info.state_names.map((nm, d) => `${nm} ${fmt(cur.ready.states[s * k + d])}`).join(', '));
        for (let s = 0; s < n; s++) states.push({ label: stateLabel(s), value: value(s), probs: probs(s) });
        if (cur.audit) {
          const diff = cur.audit.differing_states || [];
          note = (note ? `${note} ` : '') + (diff.length
            ? `Shaping audit: in ${diff.length} state${diff.length === 1 ? '' : 's'} the best action under this variant's reward differs from the task's own; following it costs ${formatNumber(Number(cur.audit.base_value_loss))} of task return from the start.`
            : `Shaping audit: this variant's reward leaves the best actions unchanged${cur.audit.potential_based ? ' (potential-based)' : ''}.`);
          ui.auditList.replaceChildren(...diff.map((d) => {
            const li = document.createElement('li');
            const where = Number.isInteger(d.state) && d.state < n ? stateLabel(d.state) : `state ${d.state}`;
            li.textContent = `${where}: task's best ${(d.base_actions || []).join('/')}; shaped ${(d.shaped_actions || []).join('/')}${d.reachable === false ? ' (not reached from the start)' : ''}`;
            return li;
          }));
        }
        drawStateList(ctx, { states, actions: cur.info.action_names, valueLabel }, opts);
        ui.valueTitle.textContent = `Value and policy per state: ${cur.label}, seed ${cur.seed}`;
        ui.valueCanvas.setAttribute('aria-label', `One row per state: ${valueLabel} and the policy's share of each action`);
      }
    } else if (cur.slice) {
      const sl = cur.slice;
      const zSel = ui.sliceZ.value || 'value';
      const col = zSel === 'value' ? 0 : 1 + Number(zSel.slice(1));
      const z = new Float64Array(sl.n * sl.ny);
      for (let i = 0; i < z.length; i++) z[i] = sl.data[i * stride + col];
      const names = cur.info.state_names;
      const zLabel = ui.sliceZ.selectedOptions[0]?.textContent || 'value';
      drawSlice(ctx, {
        nx: sl.n, ny: sl.ny, x: [cur.info.state_low[sl.ix], cur.info.state_high[sl.ix]], y: [cur.info.state_low[sl.iy], cur.info.state_high[sl.iy]],
        z, xLabel: names[sl.ix], yLabel: sl.ny > 1 ? names[sl.iy] : '', zLabel,
      }, opts);
      const held = names.map((nm, d) => (d === sl.ix || d === sl.iy ? null : `${nm} = ${fmt(sl.fixed[d])}`)).filter(Boolean);
      if (held.length) note = `Held fixed: ${held.join(', ')}.`;
      if (col === 0 && Array.from(z).every((v) => Number.isNaN(v))) note += ' This learner keeps no state-value estimate.';
      ui.valueTitle.textContent = `${zLabel} over ${names[sl.ix]}${sl.ny > 1 ? ` and ${names[sl.iy]}` : ''}: ${cur.label}, seed ${cur.seed}`;
      ui.valueCanvas.setAttribute('aria-label', `Heat map of ${zLabel} over ${names[sl.ix]}${sl.ny > 1 ? ` and ${names[sl.iy]}` : ''}`);
    }
    ui.valueNote.textContent = note;
  }

  // ------------------------------------------------------------ episodes

  async function newEpisode() {
    if (!cur) return;
    stopAnim();
    const seed = Math.max(0, Math.floor(Number(ui.rollSeed.value) || 0));
    const limit = Math.min(2000, Number(JSON.parse(cur.configJson).task?.max_steps) || 500);
    let frames;
    try {
      frames = await probe.query('rollout', { maxSteps: limit, seed, greedy: ui.greedy.checked });
    } catch (err) {
      app.showError(`playing an episode: ${messageOf(err)}`);
      return;
    }
    const k = cur.info.state_names.length;
    const width = cur.ready.policyWidth;
    cur.scene = {
      kind: cur.info.task_kind, frames, stride: k + width + 2, k, width,
      names: cur.info.state_names, tableStates: cur.info.table_states || [], actions: cur.info.action_names, low: cur.info.state_low, high: cur.info.state_high,
      map: cur.info.grid_map || null,
    };
    const n = frameCount(cur.scene);
    ui.rollPos.max = String(Math.max(0, n - 1));
    anim.t = 0;
    ui.rollPos.value = '0';
    drawRoll();
    startAnim();
  }

  function drawRoll() {
    if (!cur || !cur.scene || ui.views.hidden) return;
    const w = Math.floor(ui.rollBox.clientWidth);
    const h = Math.floor(ui.rollBox.clientHeight);
    if (w < 10 || h < 10) return;
    const dpr = window.devicePixelRatio || 1;
    sizeCanvas(ui.rollCanvas, w, h, dpr);
    const colours = { ...app.colours(), accent: app.accent() };
    drawFrame(ui.rollCanvas.getContext('2d'), cur.scene, anim.t, { width: w, height: h, dpr, colours, font: app.font() });
    ui.rollCanvas.setAttribute('aria-label', `Episode of ${cur.label}, seed ${cur.seed}: step ${anim.t} of ${frameCount(cur.scene) - 1}`);
    ui.rollPos.value = String(anim.t);
  }

  function tick(now) {
    anim.raf = 0;
    if (!anim.playing || !cur || !cur.scene) return;
    const fps = Number(ui.speed.value) || 15;
    if (now - anim.last >= 1000 / fps) {
      anim.last = now;
      if (anim.t < frameCount(cur.scene) - 1) { anim.t += 1; drawRoll(); } else { stopAnim(); return; }
    }
    anim.raf = requestAnimationFrame(tick);
  }

  function startAnim() {
    if (!cur || !cur.scene) return;
    if (anim.t >= frameCount(cur.scene) - 1) anim.t = 0;
    anim.playing = true;
    ui.play.textContent = 'Pause';
    if (!anim.raf) anim.raf = requestAnimationFrame(tick);
  }

  function stopAnim() {
    anim.playing = false;
    ui.play.textContent = 'Play';
    if (anim.raf) cancelAnimationFrame(anim.raf);
    anim.raf = 0;
  }

  // ------------------------------------------------------------ wiring

  ui.go.addEventListener('click', go);
  for (const r of document.querySelectorAll('input[name="value-source"]')) r.addEventListener('change', () => drawValues());
  ui.sliceX.addEventListener('change', showValues);
  ui.sliceY.addEventListener('change', showValues);
  ui.sliceZ.addEventListener('change', () => drawValues());
  ui.play.addEventListener('click', () => (anim.playing ? stopAnim() : startAnim()));
  ui.step.addEventListener('click', () => {
    stopAnim();
    if (cur && cur.scene && anim.t < frameCount(cur.scene) - 1) { anim.t += 1; drawRoll(); }
  });
  ui.rollPos.addEventListener('input', () => { stopAnim(); anim.t = Number(ui.rollPos.value) || 0; drawRoll(); });
  ui.rollNew.addEventListener('click', () => {
    ui.rollSeed.value = String((Math.max(0, Math.floor(Number(ui.rollSeed.value) || 0)) + 1));
    newEpisode();
  });
  ui.greedy.addEventListener('change', newEpisode);
  ui.rollSeed.addEventListener('change', newEpisode);
  const png = async (canvas, name) => {
    try {
      download(`${fileStem(app.state.run?.title)}-${name}.png`, await canvasPng(canvas));
    } catch (err) { app.showError(messageOf(err)); }
  };
  ui.pngValue.addEventListener('click', () => png(ui.valueCanvas, 'values'));
  ui.pngRoll.addEventListener('click', () => png(ui.rollCanvas, 'episode'));
  new ResizeObserver(() => { drawValues(); drawRoll(); }).observe(ui.valueBox);

  return {
    refresh,
    draw() { drawValues(); drawRoll(); },
    stop() { stopAnim(); probe.stop(); },
    /** For tests: what is shown. */
    debug: () => {
      if (!cur) return null;
      const n = cur.scene ? frameCount(cur.scene) : 0;
      const k = cur.info.state_names.length;
      const stride = 1 + cur.ready.policyWidth;
      const rows = [];
      for (let i = 0; i < n; i++) rows.push(frameAt(cur.scene, i).state);
      return {
        serial, variant: cur.variant, seed: cur.seed, steps: cur.ready.done, status: cur.ready.status, frames: n, t: anim.t, playing: anim.playing,
        marks: (cur.audit?.differing_states || []).length,
        states: rows, lastFlag: n ? frameAt(cur.scene, n - 1).flag : null,
        stateObs: Array.from(cur.ready.states), exact: Array.from(cur.ready.values),
        critic: cur.critic ? Array.from({ length: cur.critic.length / stride }, (_, s) => Array.from(cur.critic.subarray(s * stride, (s + 1) * stride))) : null,
        slice: cur.slice ? { ix: cur.slice.ix, iy: cur.slice.iy, points: cur.slice.data.length / stride } : null,
        k,
      };
    },
  };
}

const fmt = (v) => formatNumber(v);

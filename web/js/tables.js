// The results tables: scores per variant, pairwise comparisons with their
// verdicts, and the seeds advisor. Each render function takes a container
// element and the parsed summary JSON (the same object `critbox run` prints)
// and rebuilds the container's rows; createTablesView wires them to the page
// (headers, colour swatches, the note on partial data). Every piece of text
// from the summary (labels, verdicts, failure reasons) is set with
// textContent; every number goes through numbers.js.

import { formatNumber, MISSING } from './numbers.js';
import { drawSample, seriesStyle, sizeCanvas } from './chart.js';

/** A number for a table cell: 3 significant digits, – for missing. */
export function fmt(x) {
  return formatNumber(x);
}

/** "lo to hi" of a two-number interval, or –. */
export function fmtInterval(ci) {
  return Array.isArray(ci) && ci.length === 2 && ci.every((v) => typeof v === 'number')
    ? `${fmt(ci[0])} to ${fmt(ci[1])}`
    : MISSING;
}

/** A p-value: 2 significant digits, "< 0.001" below that. */
export function fmtP(p) {
  if (typeof p !== 'number' || !Number.isFinite(p)) return MISSING;
  if (p < 0.001) return '< 0.001';
  return formatNumber(p, { digits: 2 });
}

/** Environment steps: 3750, 12.5K, 1.2M. */
export function fmtSteps(v) {
  return formatNumber(typeof v === 'number' ? Math.round(v) : v);
}

function el(tag, text, className) {
  const e = document.createElement(tag);
  if (text !== undefined && text !== null) e.textContent = String(text);
  if (className) e.className = className;
  return e;
}

function num(text, title) {
  const td = el('td', text, 'num');
  if (title) td.title = title;
  return td;
}

/** A number cell with a second, smaller line (its interval). */
function num2(main, sub, title) {
  const td = el('td', null, 'num');
  td.append(el('span', main, 'main'), el('span', sub, 'sub'));
  if (title) td.title = title;
  return td;
}

/** A probability with 2 decimals. */
function fmtProb(x) {
  return formatNumber(x, { decimals: 2 });
}

function emptyRow(cols, text) {
  const tr = el('tr', null, 'empty');
  const td = el('td', text);
  td.colSpan = cols;
  tr.append(td);
  return tr;
}

/** Column headers of the score table (the tests read them). */
export const SCORE_COLUMNS = [
  'Variant', 'Final return, mean (95% interval)', 'IQM (95% interval)', 'Median', 'SD',
  'Area under curve', 'Steps to threshold', 'Seeds',
];

/**
 * Fill the score table body: one row per variant.
 * @param {HTMLElement} tbody
 * @param {object|null} summary
 * @param {object} opts {swatch(i) -> Element, emptyText, threshold}
 */
export function renderScores(tbody, summary, opts = {}) {
  if (!summary || !Array.isArray(summary.variants) || summary.variants.length === 0) {
    tbody.replaceChildren(emptyRow(SCORE_COLUMNS.length, opts.emptyText || 'Filled in when a run finishes.'));
    return;
  }
  const rows = summary.variants.flatMap((v, i) => {
    const tr = el('tr');
    const name = el('th');
    name.scope = 'row';
    if (opts.swatch) name.append(opts.swatch(i));
    name.append(el('span', v.label ?? `variant ${i + 1}`));
    const fr = v.final_return || {};
    const auc = v.auc || {};
    const reach = v.steps_to_threshold;
    let reachText = [MISSING, 'no threshold set'];
    let reachTitle = 'Set a threshold under Scoring to count the steps each seed needs to reach it.';
    if (reach && typeof reach === 'object') {
      const total = (reach.reached ?? 0) + (reach.never ?? 0);
      reachText = reach.reached
        ? [`median ${fmtSteps(reach.median_steps)}`, `${reach.reached} of ${total} seeds`]
        : ['never', `0 of ${total} seeds`];
      reachTitle = `Steps until a seed's binned return first reaches ${fmt(reach.threshold)}; ${reach.never ?? 0} seed(s) never reach it.`;
    }
    const failed = Array.isArray(v.failed) ? v.failed : [];
    tr.append(
      name,
      num2(fmt(fr.mean), fmtInterval(fr.ci95),
        `Mean over seeds of each seed's mean base return in the final part of the budget; Student-t 95% interval (bootstrap: ${fmtInterval(fr.bootstrap_ci95)})`),
      num2(fmt(fr.iqm), fmtInterval(fr.iqm_ci95), 'Interquartile mean over seeds with its bootstrap 95% interval'),
      num(fmt(fr.median)),
      num(fmt(fr.sd), 'Standard deviation of the final return over seeds'),
      num2(fmt(auc.mean), fmtInterval(auc.ci95), 'Mean height of each seed\'s curve over the budget (normalised area), with its Student-t 95% interval'),
      num2(reachText[0], reachText[1], reachTitle),
      num2(`${fr.n ?? 0} of ${summary.seeds ?? '?'}`, failed.length ? `${failed.length} failed` : `${v.episodes ?? 0} episodes`,
        'Seeds with a final return, of all seeds; episodes finished over all seeds'),
    );
    const extra = [];
    if (failed.length) {
      const more = el('tr', null, 'fail-row');
      const td = el('td', `Failed: ${failed.map((f) => `seed ${f.seed}: ${f.reason}`).join('; ')}`, 'fail');
      td.colSpan = SCORE_COLUMNS.length;
      more.append(td);
      extra.push(more);
    }
    const h = v.hacking;
    if (h && h.flag) {
      const more = el('tr', null, 'fail-row hacking');
      const td = el('td', `Possible reward hacking: the shaped return rose by ${fmt(h.shaped_change)} over the run while the task's return changed by ${fmt(h.base_change)} (${h.seeds_flagged} of ${h.seeds} seeds). Judge this variant by its task return.`, 'fail');
      td.colSpan = SCORE_COLUMNS.length;
      more.append(td);
      extra.push(more);
    }
    if (extra.length) tr.className = 'pair-row';
    return [tr, ...extra];
  });
  tbody.replaceChildren(...rows);
}

/** Column headers of the comparison table. */
export const COMPARISON_COLUMNS = ['B against A', 'B − A (95% interval)', 'P(B > A) (95% interval)', 'Welch t', 'df', 'p'];

/**
 * Fill the pairwise comparison table body: one row per pair of variants.
 */
export function renderComparisons(tbody, summary, opts = {}) {
  const list = summary && Array.isArray(summary.comparisons) ? summary.comparisons : [];
  if (!summary) {
    tbody.replaceChildren(emptyRow(COMPARISON_COLUMNS.length, opts.emptyText || 'Filled in when a run finishes.'));
    return;
  }
  if (list.length === 0) {
    tbody.replaceChildren(emptyRow(COMPARISON_COLUMNS.length, 'Add a second variant to compare.'));
    return;
  }
  const rows = list.flatMap((c) => {
    const tr = el('tr', null, 'pair-row');
    const pair = el('th');
    pair.scope = 'row';
    pair.append(el('span', c.b, 'pair-b'), el('span', ' against ', 'pair-vs'), el('span', c.a, 'pair-a'));
    const pi = c.prob_improvement || {};
    const ci = Array.isArray(pi.ci95) ? `${fmtProb(pi.ci95[0])} to ${fmtProb(pi.ci95[1])}` : MISSING;
    const w = c.welch;
    const wTitle = 'Welch\'s unequal-variance t-test on the final returns';
    tr.append(
      pair,
      num2(fmt(c.diff), fmtInterval(c.diff_ci95), 'Difference of mean final returns, percentile bootstrap interval'),
      num2(fmtProb(pi.value), ci, 'Chance that a random seed of B ends above a random seed of A (ties count one half)'),
      num(w ? fmt(w.t) : 'needs 2 seeds each', wTitle),
      num(w ? fmt(w.df) : '', wTitle),
      num(w ? fmtP(w.p) : '', wTitle),
    );
    const verdict = el('tr', null, 'verdict-row');
    const td = el('td', c.verdict ?? '', 'verdict');
    td.colSpan = COMPARISON_COLUMNS.length;
    verdict.append(td);
    return [tr, verdict];
  });
  tbody.replaceChildren(...rows);
}

/** Column headers of the seeds advisor table. */
export const ADVISOR_COLUMNS = ['Pair', 'Difference to detect', 'Seeds per variant', 'Normal approximation'];

/**
 * Fill the seeds advisor: per pair, the seeds per variant needed to detect a
 * difference at α = 0.05 with power 0.8, from the observed spread.
 */
export function renderAdvisor(tbody, summary, opts = {}) {
  if (!summary) {
    tbody.replaceChildren(emptyRow(ADVISOR_COLUMNS.length, opts.emptyText || 'Filled in when a run finishes.'));
    return;
  }
  const list = Array.isArray(summary.comparisons) ? summary.comparisons : [];
  if (list.length === 0) {
    tbody.replaceChildren(emptyRow(ADVISOR_COLUMNS.length, 'Needs two variants.'));
    return;
  }
  const have = summary.seeds ?? 0;
  const rows = list.map((c) => {
    const tr = el('tr');
    const pair = el('th', `${c.b} against ${c.a}`);
    pair.scope = 'row';
    const s = c.seeds_advice;
    if (!s) {
      const td = el('td', 'needs at least 2 finished seeds per variant and some spread');
      td.colSpan = 3;
      tr.append(pair, td);
      return tr;
    }
    const need = s.seeds_per_variant;
    const enough = typeof need === 'number' && need <= have;
    const cell = num(typeof need === 'number' ? `${need}${enough ? ' (you have enough)' : ` (you ran ${have})`}` : MISSING);
    if (typeof need === 'number' && !enough) cell.classList.add('short');
    tr.append(pair, num(fmt(s.difference)), cell, num(typeof s.normal_approximation === 'number' ? String(s.normal_approximation) : MISSING));
    return tr;
  });
  tbody.replaceChildren(...rows);
}

/**
 * The tables on the page.
 * @param {object} app {state, controller, palette()}
 * @returns {{render()}}
 */
export function createTablesView(app) {
  const { state } = app;
  const $ = (id) => document.getElementById(id);
  const ui = {
    scoresHead: $('scores-head'), scoresBody: $('scores-body'), scoresNote: $('scores-note'),
    comparisonsHead: $('comparisons-head'), comparisonsBody: $('comparisons-body'),
    advisorHead: $('advisor-head'), advisorBody: $('advisor-body'),
  };

  function headRow(tr, columns) {
    if (tr.children.length) return;
    tr.replaceChildren(...columns.map((c, i) => {
      const th = document.createElement('th');
      th.scope = 'col';
      th.textContent = c;
      if (i > 0 && i < columns.length - 1) th.className = 'num';
      return th;
    }));
  }

  function swatch(i) {
    const sw = document.createElement('canvas');
    sw.className = 'swatch';
    const dpr = window.devicePixelRatio || 1;
    sizeCanvas(sw, 30, 12, dpr);
    const ctx = sw.getContext('2d');
    ctx.setTransform(dpr, 0, 0, dpr, 0, 0);
    drawSample(ctx, 0, 6, 30, seriesStyle(i, app.palette()));
    sw.setAttribute('aria-hidden', 'true');
    return sw;
  }

  function render() {
    headRow(ui.scoresHead, SCORE_COLUMNS);
    headRow(ui.comparisonsHead, COMPARISON_COLUMNS);
    headRow(ui.advisorHead, ADVISOR_COLUMNS);
    const s = state.summary;
    const run = state.run;
    const emptyText = app.controller.isActive() ? 'Training… filled in when the run finishes.' : 'Filled in when a run finishes.';
    renderScores(ui.scoresBody, s, { swatch, emptyText });
    renderComparisons(ui.comparisonsBody, s, { emptyText });
    renderAdvisor(ui.advisorBody, s, { emptyText });
    let note = '';
    if (s) {
      const frac = typeof s.final_fraction === 'number' ? s.final_fraction : null;
      note = frac ? `(final return: mean base return over the last ${formatNumber(frac * 100)}% of each seed's steps, then over seeds)` : '';
      if (run && run.status === 'cancelled') note += ' — run cancelled, partial data';
      if (run && run.status === 'interrupted') note += ' — finished jobs only; the run was interrupted';
      if (run && run.origin === 'file') note += ` — opened from ${run.fileName}`;
    }
    ui.scoresNote.textContent = note;
  }

  return { render };
}

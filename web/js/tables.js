// The results tables: scores per variant on the scored measure (and the
// other measure beside it), the comparisons with their verdicts, and the
// seeds advisor. Each render function takes a container
// element and the parsed summary JSON (the same object `critbox run` prints)
// and rebuilds the container's rows; createTablesView wires them to the page
// (headers, colour swatches, the note on partial data). Every piece of text
// from the summary (labels, verdicts, failure reasons) is set with
// textContent; every number goes through numbers.js.

import { formatNumber, MISSING } from './numbers.js';
import { drawSample, seriesStyle, sizeCanvas } from './plot.js';

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

/** The two measures, as the tables name them. */
const MEASURE_NAME = { evaluation: 'Learned policy', training: 'While learning' };

/** Column headers of the score table for a summary (the tests read them). */
export function scoreColumns(summary) {
  const on = summary && summary.score_on === 'evaluation' ? 'evaluation' : 'training';
  const cols = [
    'Variant', `${MEASURE_NAME[on]}: final, mean (95% CI)`, '90% of seeds land in',
    'IQM (95% bootstrap)', 'Median', 'SD',
  ];
  if (on === 'evaluation') cols.push('While learning: final, mean (95% CI)');
  cols.push('Area under curve', 'Steps to threshold', 'Seeds');
  return cols;
}

/** The score (final_return or eval_return) a summary scores on, of variant v. */
function scored(summary, v) {
  return (summary.score_on === 'evaluation' ? v.eval_return : v.final_return) || {};
}

/**
 * Fill the score table body: one row per variant.
 * @param {HTMLElement} tbody
 * @param {object|null} summary
 * @param {object} opts {swatch(i) -> Element, emptyText}
 */
export function renderScores(tbody, summary, opts = {}) {
  const columns = scoreColumns(summary);
  if (!summary || !Array.isArray(summary.variants) || summary.variants.length === 0) {
    tbody.replaceChildren(emptyRow(columns.length, opts.emptyText || 'Filled in when a run finishes.'));
    return;
  }
  const evaluating = summary.score_on === 'evaluation';
  const rows = summary.variants.flatMap((v, i) => {
    const tr = el('tr');
    const name = el('th');
    name.scope = 'row';
    if (opts.swatch) name.append(opts.swatch(i));
    name.append(el('span', v.label ?? `variant ${i + 1}`));
    const sc = scored(summary, v);
    const fr = v.final_return || {};
    const auc = v.auc || {};
    const reach = v.steps_to_threshold;
    let reachText = [MISSING, 'no threshold set'];
    let reachTitle = 'Set a threshold under Scoring to count the steps each seed needs to reach it.';
    if (reach && typeof reach === 'object') {
      const total = (reach.reached ?? 0) + (reach.never ?? 0);
      const median = reach.median_above_budget ? '> budget' : `median ${fmtSteps(reach.median)}`;
      reachText = reach.reached ? [median, `${reach.reached} of ${total} seeds`] : ['never', `0 of ${total} seeds`];
      reachTitle = `Steps until a seed's curve first reaches ${fmt(reach.threshold)}; seeds that never do (${reach.never ?? 0}, failed ones included) count as beyond the budget, so the median is "> budget" when half or more never do.`;
    }
    const failed = Array.isArray(v.failed) ? v.failed : [];
    const missing = Array.isArray(sc.missing) ? sc.missing.length : 0;
    const what = evaluating ? 'the learned policy\'s mean return in the evaluation episodes in the final part of the budget' : 'the mean base return of the episodes ending in the final part of the budget';
    const cells = [
      name,
      num2(fmt(sc.mean), fmtInterval(sc.ci95), `Per seed, ${what}; then the mean over seeds with its Student-t 95% interval`),
      num(fmtInterval(sc.tolerance90), 'Where 90% of seeds land, with 95% confidence (normal tolerance interval, Howe 1969): what to expect from one more run, not an interval for the mean'),
      num2(fmt(sc.iqm), fmtInterval(sc.iqm_ci95), 'Interquartile mean over seeds with its percentile-bootstrap 95% interval'),
      num(fmt(sc.median)),
      num(fmt(sc.sd), 'Standard deviation over seeds'),
    ];
    if (evaluating) {
      cells.push(num2(fmt(fr.mean), fmtInterval(fr.ci95), 'The return earned while learning (for an off-policy learner: its behaviour policy; for the deterministic learner: with exploration noise), final part of the budget'));
    }
    cells.push(
      num2(fmt(auc.mean), fmtInterval(auc.ci95), `Each seed's mean curve value over steps ${fmtSteps(auc.from_step)} to ${fmtSteps(auc.to_step)} (a range common to all seeds), with its Student-t 95% interval`),
      num2(reachText[0], reachText[1], reachTitle),
      num2(`${sc.n ?? 0} of ${summary.seeds ?? '?'}`,
        failed.length ? `${failed.length} failed` : missing ? `${missing} without a value` : `${v.episodes ?? 0} episodes`,
        'Seeds with a final value, of all seeds; failed seeds are left out of every number'),
    );
    tr.append(...cells);
    const extra = [];
    const wide = (text, cls) => {
      const more = el('tr', null, `fail-row ${cls || ''}`.trim());
      const td = el('td', text, 'fail');
      td.colSpan = columns.length;
      more.append(td);
      extra.push(more);
    };
    if (failed.length) wide(`${failed.length} of ${summary.seeds} seeds failed and are left out: ${failed.map((f) => `seed ${f.seed}: ${f.reason}`).join('; ')}`);
    if (missing) wide(`${missing} seed(s) have no ${evaluating ? 'evaluation' : 'episode'} in the final part of the budget and are left out: seeds ${sc.missing.join(', ')}`);
    const h = v.hacking;
    if (h && h.flag) {
      wide(`Possible reward hacking: the shaped return while learning rose by ${fmt(h.shaped_change)} over the run while the task's return changed by ${fmt(h.base_change)} (${h.seeds_flagged} of ${h.seeds} seeds). Judge this variant by its task return.`, 'hacking');
    }
    if (extra.length) tr.className = 'pair-row';
    return [tr, ...extra];
  });
  tbody.replaceChildren(...rows);
}

/** Column headers of the comparison table. */
export const COMPARISON_COLUMNS = ['B against A', 'B − A (95% interval)', 'P(B > A) (95% interval)', 'Welch t', 'df', 'p', 'p, Holm-adjusted'];

/**
 * Fill the comparison table body: one row per comparison (every pair, or
 * every variant against the reference).
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
    const wTitle = 'Welch\'s unequal-variance t-test of equal means';
    tr.append(
      pair,
      num2(fmt(c.diff), w ? fmtInterval(w.ci95) : MISSING, 'Difference of the means (B − A) with Welch\'s 95% interval, the same one the verdict quotes (not adjusted for the number of comparisons)'),
      num2(fmtProb(pi.value), ci, `Chance that a random seed of B beats a random seed of A (ties count one half); interval: ${pi.method || 'none'}`),
      num(w ? fmt(w.t) : 'needs 2 seeds each', wTitle),
      num(w ? fmt(w.df) : '', wTitle),
      num(w ? fmtP(w.p) : '', 'This comparison alone'),
      num(w ? fmtP(w.p_holm) : '', 'Adjusted by Holm\'s method over every comparison of the experiment; the verdict uses this one'),
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
export const ADVISOR_COLUMNS = ['Comparison', 'True difference', 'Seeds per variant for 80% power', 'Level per comparison'];

/**
 * Fill the seeds advisor: per comparison, the seeds per variant that give
 * an 80% chance of detecting a difference, from the spreads seen in this run.
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
  const rows = list.flatMap((c) => {
    const tr = el('tr', null, 'pair-row');
    const pair = el('th', `${c.b} against ${c.a}`);
    pair.scope = 'row';
    const s = c.seeds_advice;
    if (!s) {
      const td = el('td', 'needs at least 2 finished seeds per variant, some spread, and a difference other than 0');
      td.colSpan = 3;
      tr.append(pair, td);
      return [tr];
    }
    const need = s.seeds_per_variant;
    const enough = typeof need === 'number' && need <= have;
    const cell = num(typeof need === 'number' ? `${need}${enough ? ' (you ran enough)' : ` (you ran ${have})`}` : 'more than can be run');
    if (!enough) cell.classList.add('short');
    const sized = s.sized_to === 'detect_difference' ? 'the difference set under Scoring' : 'the difference observed here';
    tr.append(pair, num(fmt(s.difference), `Sized to ${sized}`), cell, num(fmtP(s.alpha), 'Two-sided Welch test at 0.05 shared over the comparisons'));
    const more = el('tr', null, 'verdict-row');
    const td = el('td', s.caution ? `${s.text}. Caution: ${s.caution}.` : `${s.text}.`, 'verdict');
    td.colSpan = ADVISOR_COLUMNS.length;
    more.append(td);
    return [tr, more];
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
    advisorHead: $('advisor-head'), advisorBody: $('advisor-body'), compareNote: $('compare-note'),
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
    const s = state.summary;
    ui.scoresHead.replaceChildren();
    headRow(ui.scoresHead, scoreColumns(s));
    headRow(ui.comparisonsHead, COMPARISON_COLUMNS);
    headRow(ui.advisorHead, ADVISOR_COLUMNS);
    const run = state.run;
    const emptyText = app.controller.isActive() ? 'Training… filled in when the run finishes.' : 'Filled in when a run finishes.';
    renderScores(ui.scoresBody, s, { swatch, emptyText });
    renderComparisons(ui.comparisonsBody, s, { emptyText });
    renderAdvisor(ui.advisorBody, s, { emptyText });
    let note = '';
    let compareNote = '(B − A)';
    if (s) {
      const frac = typeof s.final_fraction === 'number' ? formatNumber(s.final_fraction * 100) : '?';
      note = s.score_on === 'evaluation'
        ? `— scored on the learned policy: evaluation episodes in the last ${frac}% of the budget`
        : `— scored on the return while learning: episodes ending in the last ${frac}% of the budget`;
      if (run && run.status === 'cancelled') note += ' — run cancelled, partial data';
      if (run && run.status === 'interrupted') note += ' — finished jobs only; the run was interrupted';
      if (run && run.origin === 'file') note += ` — opened from ${run.fileName}`;
      const m = Array.isArray(s.comparisons) ? s.comparisons.length : 0;
      const against = s.reference ? `each variant against ${s.reference}` : 'every pair';
      compareNote = `(${s.score_on === 'evaluation' ? 'learned policy' : 'while learning'}; B − A; ${against}; p adjusted by Holm's method over ${m} comparison${m === 1 ? '' : 's'})`;
    }
    ui.scoresNote.textContent = note;
    if (ui.compareNote) ui.compareNote.textContent = compareNote;
  }

  return { render };
}

// The run bar: Train, Pause/Resume, Cancel and "Finish the interrupted run",
// the line that says whether the experiment can run (or why not), the
// overall progress with the time left, and one bar per variant. It reads the
// state and asks the run controller to act; it changes nothing itself.

import { runFraction, variantFractions, secondsLeft, formatLeft } from './state.js';
import { JOB } from './protocol.js';
import { formatCount } from './numbers.js';

/** What the progress line adds for a run in each state. */
const STATUS_NOTE = { pausing: ' (pausing)', paused: ' (paused)', cancelled: ' (cancelled)', interrupted: ' (interrupted)' };

/**
 * @param {object} app {state, controller, train(), palette(), onBusyChange()}
 * @returns {{render(), renderProgress()}}
 */
export function createRunBar(app) {
  const { state, controller } = app;
  const $ = (id) => document.getElementById(id);
  const ui = {
    train: $('train'), pause: $('pause'), cancel: $('cancel'), resume: $('resume'), reason: $('run-reason'),
    progress: $('progress'), percent: $('percent'), eta: $('eta'), variantProgress: $('variant-progress'),
  };
  let lastBusy = null;
  let etaTimer = 0;
  let pending = 0;
  let shownRun = null;

  function render() {
    const run = state.run;
    const active = controller.isActive();
    const c = state.check;
    if (c.ok && active) {
      const stage = run.tuningJobs ? ` (study: ${run.stage === 'tuning' ? `tuning, ${run.tuningJobs} jobs, then the chosen points on fresh seeds` : 'the chosen points on fresh seeds'})` : '';
      ui.reason.textContent = `Training ${run.jobs} jobs on ${run.workers} worker${run.workers === 1 ? '' : 's'}${stage}; edits apply to the next run.`;
    } else if (c.ok) {
      const i = c.info;
      const fresh = i.jobs - (i.tuning_jobs || 0);
      ui.reason.textContent = i.tuning_jobs
        ? `Ready: a study of ${i.tuning_jobs} tuning jobs (every grid point), then ${i.labels.length} variant${i.labels.length === 1 ? '' : 's'} × ${i.seeds} fresh seed${i.seeds === 1 ? '' : 's'} = ${fresh} jobs, ${formatCount(i.steps)} steps each.`
        : `Ready: ${i.labels.length} variant${i.labels.length === 1 ? '' : 's'} × ${i.seeds} seed${i.seeds === 1 ? '' : 's'} = ${i.jobs} jobs of ${formatCount(i.steps)} steps.`;
    } else {
      ui.reason.textContent = c.message;
    }
    ui.reason.classList.toggle('bad', !c.ok);
    ui.train.disabled = !c.ok || active;
    const pausable = !!run && ['running', 'pausing', 'paused'].includes(run.status);
    ui.pause.disabled = !pausable;
    ui.cancel.disabled = !pausable;
    ui.pause.textContent = run && (run.status === 'pausing' || run.status === 'paused') ? 'Resume' : 'Pause';
    if (active !== lastBusy) { lastBusy = active; app.onBusyChange(); }
    const interrupted = !!run && run.status === 'interrupted';
    ui.resume.hidden = !interrupted;
    if (interrupted) {
      const left = run.jobStatus.reduce((n, st) => n + (st === JOB.unfinished ? 1 : 0), 0);
      ui.resume.textContent = `Finish the interrupted run (${left} job${left === 1 ? '' : 's'} left)`;
      ui.resume.disabled = !state.wasm;
    }
    clearInterval(etaTimer);
    etaTimer = run && run.status === 'running' ? setInterval(renderProgress, 1000) : 0;
    renderProgress();
  }

  /** Progress is drawn at most four times a second (reports come more often). */
  function scheduleProgress() {
    if (pending) return;
    pending = setTimeout(() => { pending = 0; renderProgress(); }, 250);
  }

  function renderProgress() {
    const run = state.run;
    const pct = run ? Math.floor(runFraction(run) * 100) : 0;
    ui.progress.value = pct;
    let text = `${pct}%${run ? STATUS_NOTE[run.status] || '' : ''}`;
    const failed = run ? run.jobStatus.reduce((n, st) => n + (st === JOB.failed ? 1 : 0), 0) : 0;
    if (failed) text += ` · ${failed} job${failed === 1 ? '' : 's'} failed`;
    ui.percent.textContent = text;
    ui.eta.textContent = run && run.status === 'running' ? formatLeft(secondsLeft(run, performance.now())) : '';

    const show = !!run && run.status !== 'opened' && run.labels.length > 1;
    ui.variantProgress.hidden = !show;
    if (!show) return;
    const fr = variantFractions(run);
    const palette = app.palette();
    if (ui.variantProgress.children.length !== fr.length || shownRun !== run) {
      shownRun = run;
      ui.variantProgress.replaceChildren(...run.labels.map((label) => {
        const li = document.createElement('li');
        const lab = document.createElement('label');
        const name = document.createElement('span');
        name.textContent = label;
        const p = document.createElement('progress');
        p.max = 100;
        lab.append(name, p);
        li.append(lab);
        return li;
      }));
    }
    fr.forEach((f, i) => {
      const li = ui.variantProgress.children[i];
      li.style.setProperty('--series-colour', palette[i % palette.length]);
      li.querySelector('progress').value = Math.floor(f * 100);
    });
  }

  ui.train.addEventListener('click', () => app.train());
  ui.pause.addEventListener('click', () => controller.togglePause());
  ui.cancel.addEventListener('click', () => controller.cancel());
  ui.resume.addEventListener('click', () => controller.finishInterrupted());

  return { render, renderProgress: scheduleProgress };
}

// The file bar: copy a share link of the experiment, open a results file
// (shown without re-running), save the current results as a results file,
// export the tidy CSV. Downloads are made in the browser (export.js);
// nothing is sent anywhere.

import { download, fileStem, readFileText } from './export.js';
import { encodeConfig, linkFor } from './share.js';
import { messageOf } from './wasm.js';
import { formatNumber } from './numbers.js';

/**
 * @param {object} app {state, controller, experiment, showError, showNote}
 * @returns {{render()}}
 */
export function createFileBar(app) {
  const { state, controller } = app;
  const $ = (id) => document.getElementById(id);
  const ui = {
    copyLink: $('copy-link'), shareOut: $('share-out'), shareUrl: $('share-url'), openFile: $('open-file'),
    saveResults: $('save-results'), exportCsv: $('export-csv'),
  };
  const stem = () => fileStem(state.run?.title || state.config?.title);

  function render() {
    const off = !state.results || !state.run || controller.isActive();
    ui.saveResults.disabled = off;
    ui.exportCsv.disabled = off;
  }

  async function copyLink() {
    if (!state.config) return;
    let link;
    try {
      link = linkFor(await encodeConfig(state.config));
    } catch (err) {
      app.showError(`could not make a link: ${messageOf(err)}`);
      return;
    }
    ui.shareUrl.value = link;
    ui.shareOut.hidden = false;
    let copied = false;
    try {
      await navigator.clipboard.writeText(link);
      copied = true;
    } catch {
      ui.shareUrl.focus();
      ui.shareUrl.select();
      try { copied = document.execCommand('copy'); } catch { copied = false; }
    }
    let text = copied
      ? `Link copied (${formatNumber(link.length / 1024, { digits: 2 })} KB). It holds the whole experiment; opening it reproduces the same numbers.`
      : 'The browser did not allow copying: select the link in the field and copy it.';
    if (!state.check.ok) text += ` Note: this experiment has a problem (${state.check.message}).`;
    app.showNote(text, 10000);
  }

  async function save(what, name, type, ask) {
    if (!state.results) return;
    try {
      download(`${stem()}${name}`, await ask(state.results), type);
    } catch (err) {
      app.showError(`could not write the ${what}: ${messageOf(err)}`);
    }
  }

  /** Open a results file: the results and the experiment behind them, not re-run. */
  async function openFile(file) {
    if (!state.wasm) { app.showError('The WebAssembly module is not loaded, so results files cannot be read.'); return; }
    if (controller.isActive()) { app.showError('A run is in progress; cancel it before opening a results file.'); return; }
    let text;
    try {
      text = await readFileText(file);
    } catch (err) {
      app.showError(messageOf(err));
      return;
    }
    if (!(await controller.openFile(text, file.name))) return;
    state.presetFile = '';
    app.experiment.form.renderPresets();
    app.experiment.apply(JSON.parse(state.run.configJson));
    const i = state.run;
    app.showNote(`Opened ${file.name}: ${i.labels.length} variants × ${i.seeds} seeds, not re-run.`);
  }

  ui.copyLink.addEventListener('click', copyLink);
  ui.shareUrl.addEventListener('focus', () => ui.shareUrl.select());
  ui.saveResults.addEventListener('click', () => save('results file', '-results.json', 'application/json', (r) => r.saveJson()));
  ui.exportCsv.addEventListener('click', () => save('CSV', '.csv', 'text/csv', (r) => r.tidyCsv()));
  ui.openFile.addEventListener('change', () => {
    const f = ui.openFile.files && ui.openFile.files[0];
    ui.openFile.value = '';
    if (f) openFile(f);
  });

  return { render };
}

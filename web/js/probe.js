// The page's side of the probe worker (probeworker.js), used by the
// inspection and gradient-variance views: re-train one job to a step, ask
// about the learner, run the gradient-variance probe. The worker starts on
// first use; a newer training request replaces an older one (whose promise
// then fails with "replaced by a newer request").

import { WorkerClient } from './rpc.js';
import { PROBE } from './protocol.js';

export class Probe {
  constructor() {
    this.link = null;
    this.training = 0;
    /** Called as (done, total) while a job trains. */
    this.onProgress = null;
  }

  #ensure() {
    if (!this.link || this.link.dead) {
      this.link = new WorkerClient('probeworker', 'critbox-probe');
      this.link.on(PROBE.progress, (body, forId) => {
        if (forId === this.training) this.onProgress?.(body.done, body.steps);
      });
    }
    return this.link;
  }

  /** Re-train job `jobId` of a config to `steps` steps (a study's fresh job
   * needs each variant's chosen point, `chosen`); resolves with
   * {done, status, failure, policyWidth, states, values}. */
  train(configJson, jobId, steps, chosen = null) {
    const link = this.#ensure();
    this.training = link.peekId();
    return link.request(PROBE.train, { config: configJson, jobId, steps, chunk: 5000, chosen });
  }

  /** Ask about the trained learner: kind 'inspect' {obs} or 'rollout' {maxSteps, seed, greedy}. */
  query(kind, args) {
    if (!this.link) return Promise.reject(new Error('nothing is being inspected (train a seed first)'));
    return this.link.request(PROBE.query, { kind, ...args }, args.obs ? [args.obs.buffer] : []);
  }

  /**
   * The gradient-variance probe of job (variant, seed) at the given steps:
   * resolves with its parsed JSON (see DEVELOPERS.md, WebAssembly API, probe).
   */
  async variance(configJson, variant, seed, checkpoints, estimates, episodes, chosen = null) {
    const text = await this.#ensure().request(PROBE.variance, {
      config: configJson, variant, seed, checkpoints: Float64Array.from(checkpoints), estimates, episodes, chosen,
    });
    return JSON.parse(text);
  }

  stop() {
    this.link?.close('stopped');
    this.link = null;
  }
}

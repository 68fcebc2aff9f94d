// The small request/response link every worker of the page speaks. The page
// side is WorkerClient: post(type, body) sends without an answer,
// request(type, body) returns a promise of the handler's answer (or of its
// error, with the worker's message), on(type, fn) listens to events the
// worker emits. The worker side is serve(handlers): each message's type picks
// a handler, whose return value (or a Reply carrying transferables) is the
// answer. The first message a client sends hands the worker the wasm module
// (see wasm.js): the bytes in the single-file build, the page's compiled
// module when served.
//
// Envelopes: page → worker {id, type, body} (id 0: no answer wanted);
// worker → page {id, ok: true, body} | {id, ok: false, message} answers and
// {event, for, body} events (`for` is the id of the request they belong to,
// or 0). Message types are listed in protocol.js.

import { makeWorker, wasmForWorker } from './platform.js';
import { compiledModule, messageOf, provideWasmBytes, provideWasmModule } from './wasm.js';

const BOOT = 'rpc.boot';
/** Event a worker emits when a posted message (one without an answer) failed. */
export const POST_FAILED = 'rpc.postFailed';

/** An answer with buffers to transfer instead of copy. */
export class Reply {
  constructor(body, transfer = []) {
    this.body = body;
    this.transfer = transfer;
  }
}

export class WorkerClient {
  /**
   * @param {string} script  worker module name without '.js' (see platform.js)
   * @param {string} name    the worker's name (shown in the browser's tools)
   */
  constructor(script, name) {
    this.name = name;
    this.pending = new Map();
    this.listeners = new Map();
    this.nextId = 1;
    this.dead = null;
    /** Called once with a message when the worker stops unasked (script error, crash). */
    this.onDeath = null;
    this.worker = makeWorker(script, name);
    this.worker.onmessage = (e) => this.#receive(e.data || {});
    this.worker.onerror = (e) => {
      e.preventDefault();
      const where = e.filename ? ` (${e.filename.split('/').pop()}:${e.lineno})` : '';
      this.#die(`the ${name} worker stopped: ${e.message || 'its script could not run'}${where}`);
    };
    this.worker.onmessageerror = () => this.#die(`the ${name} worker sent a message that could not be read`);
    const wasm = wasmForWorker();
    this.worker.postMessage({ id: 0, type: BOOT, body: { wasm, module: compiledModule() } }, wasm ? [wasm] : []);
  }

  /** Listen to events of `type`; fn(body, forId). */
  on(type, fn) {
    this.listeners.set(type, fn);
    return this;
  }

  /** Send without waiting for an answer (failures come back as POST_FAILED events). */
  post(type, body = {}, transfer = []) {
    if (this.dead) throw new Error(this.dead);
    this.worker.postMessage({ id: 0, type, body }, transfer);
  }

  /** Send and resolve with the handler's answer; rejects with its error message. */
  request(type, body = {}, transfer = []) {
    if (this.dead) return Promise.reject(new Error(this.dead));
    const id = this.nextId++;
    return new Promise((resolve, reject) => {
      this.pending.set(id, { resolve, reject });
      this.worker.postMessage({ id, type, body }, transfer);
    });
  }

  /** The id the next request will get (to match events to it). */
  peekId() {
    return this.nextId;
  }

  /** Stop the worker; pending requests fail with `why`. */
  close(why = 'closed') {
    if (this.dead) return;
    this.#fail(why);
    this.worker.terminate();
  }

  #fail(message) {
    this.dead = message;
    for (const p of this.pending.values()) p.reject(new Error(message));
    this.pending.clear();
  }

  #die(message) {
    if (this.dead) return;
    this.#fail(message);
    this.worker.terminate();
    this.onDeath?.(message);
  }

  #receive(msg) {
    if (msg.event !== undefined) {
      this.listeners.get(msg.event)?.(msg.body, msg.for || 0);
      return;
    }
    const p = this.pending.get(msg.id);
    if (!p) return;
    this.pending.delete(msg.id);
    if (msg.ok) p.resolve(msg.body);
    else p.reject(new Error(msg.message));
  }
}

// ---------------------------------------------------------------- worker side

/** Emit an event to the page; `forId` ties it to a request (0: none). */
export function emit(type, body = {}, transfer = [], forId = 0) {
  self.postMessage({ event: type, for: forId, body }, transfer);
}

/**
 * Answer the page's messages with `handlers[type](body, id)`. `ordered`:
 * each message waits until the previous one's handler has finished (the
 * results worker), else handlers run as messages come (the probe may be
 * told to drop a long job by a newer one).
 */
export function serve(handlers, { ordered = false } = {}) {
  let queue = Promise.resolve();
  const handle = async (msg) => {
    const { id = 0, type, body } = msg;
    try {
      const handler = handlers[type];
      if (!handler) throw new Error(`unknown message type ${JSON.stringify(type)}`);
      const out = await handler(body || {}, id);
      if (!id) return;
      if (out instanceof Reply) self.postMessage({ id, ok: true, body: out.body }, out.transfer);
      else self.postMessage({ id, ok: true, body: out === undefined ? null : out });
    } catch (err) {
      if (id) self.postMessage({ id, ok: false, message: messageOf(err) });
      else emit(POST_FAILED, { type, message: messageOf(err) });
    }
  };
  self.onmessage = (event) => {
    const msg = event.data || {};
    if (msg.type === BOOT) {
      if (msg.body?.wasm) provideWasmBytes(msg.body.wasm);
      if (msg.body?.module) provideWasmModule(msg.body.module);
      return;
    }
    if (ordered) queue = queue.then(() => handle(msg));
    else handle(msg);
  };
}

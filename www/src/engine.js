// The one module that talks to the wasm. It starts the worker from its
// data: URL, hands it the wasm bytes, sends inspect, fit, check and select
// requests and matches the answers (and the progress of a search or of a
// load) to them. When the worker dies or reports a panic, it rejects what
// was waiting, says so through `onTrouble`, and starts a fresh worker;
// `stop()` does the same on purpose, to end a long search or load. The data stay with the caller on the main
// thread.
//
// The Painter is the one exception to "the worker computes": drawing on a
// canvas touches the DOM, so a second instance of the same wasm runs on the
// main thread, only to draw figures that the worker has computed.
//
// The build (www/tools/inline.mjs) replaces the import below with the
// wasm-bindgen glue, wrapped so that its names stay its own.
import * as drawingGlue from './plumbline.js';

const MAX_QUICK_RESTARTS = 4;

/** Decodes base64 text (whitespace allowed) to bytes. */
export function base64ToBytes(text) {
  const bin = atob(text.replace(/\s+/g, ''));
  const out = new Uint8Array(bin.length);
  for (let i = 0; i < bin.length; i++) out[i] = bin.charCodeAt(i);
  return out;
}

/** An error of the calculation itself (not of the user's data or model). */
export class EngineError extends Error {
  constructor(message, kind) {
    super(message);
    this.name = 'EngineError';
    this.kind = kind; // 'panic' | 'died' | 'broken'
  }
}

export class Engine {
  /**
   * @param {object} o
   * @param {string} o.workerUrl  data: URL of the worker module
   * @param {Uint8Array} o.wasm   the wasm bytes
   * @param {(message: string, kind: string) => void} [o.onTrouble]
   */
  constructor({ workerUrl, wasm, onTrouble }) {
    this.workerUrl = workerUrl;
    this.wasm = wasm;
    this.onTrouble = onTrouble || (() => {});
    this.worker = null;
    this.pending = new Map();
    this.nextId = 1;
    this.quickRestarts = 0;
    this.broken = null; // a message once the wasm cannot be started at all
    this.generation = 0;
    this.ready = null;
    this.start();
  }

  start() {
    const generation = ++this.generation;
    let worker;
    try {
      worker = new Worker(this.workerUrl, { type: 'module', name: 'plumbline-calculation' });
    } catch (e) {
      this.fail(`This browser would not start the calculation part of the page (${e.message}).`);
      return;
    }
    this.worker = worker;
    let markReady;
    this.ready = new Promise((resolve) => { markReady = resolve; });
    worker.onmessage = (event) => {
      if (generation !== this.generation) return;
      this.receive(event.data, markReady);
    };
    worker.onerror = (event) => {
      if (event && event.preventDefault) event.preventDefault();
      if (generation !== this.generation) return;
      const detail = event && event.message ? `: ${event.message}` : '';
      this.restart(`The calculation part of the page stopped unexpectedly${detail}.`, 'died');
    };
    worker.onmessageerror = () => {
      if (generation !== this.generation) return;
      this.restart('A message from the calculation part of the page could not be read.', 'died');
    };
    // A copy: the page keeps its bytes for the next worker.
    worker.postMessage({ type: 'init', wasm: this.wasm.slice() });
  }

  receive(msg, markReady) {
    if (!msg) return;
    if (msg.type === 'ready') {
      markReady(true);
      return;
    }
    if (msg.type === 'failed') {
      this.fail(`The calculation part of the page could not start: ${msg.message}`);
      return;
    }
    const job = this.pending.get(msg.id);
    if (msg.type === 'progress') {
      if (job && job.onProgress) job.onProgress(msg.share, msg.phase ?? null);
      return;
    }
    if (msg.type === 'panic') {
      if (job) {
        this.pending.delete(msg.id);
        job.reject(new EngineError(msg.message, 'panic'));
      }
      this.restart(msg.message, 'panic');
      return;
    }
    if (msg.type === 'result' && job) {
      this.pending.delete(msg.id);
      this.quickRestarts = 0;
      if (job.onProgress) job.onProgress(1);
      let parsed;
      try {
        parsed = JSON.parse(msg.json);
      } catch (e) {
        job.reject(new EngineError(`The result could not be read: ${e.message}`, 'panic'));
        return;
      }
      job.resolve(parsed);
    }
  }

  /** Ends the current worker, rejects what waited on it and starts another. */
  restart(message, kind) {
    this.rejectAll(new EngineError(message, kind));
    if (this.worker) this.worker.terminate();
    this.worker = null;
    this.quickRestarts += 1;
    if (this.quickRestarts > MAX_QUICK_RESTARTS) {
      this.fail(`${message} It kept stopping, so it was not started again; reload the page to try again.`);
      return;
    }
    this.onTrouble(message, kind);
    this.start();
  }

  /**
   * Ends the worker on purpose (a search the user stopped, a load the user
   * cancelled): what waited is rejected with an EngineError of kind
   * 'stopped', and a fresh worker is started at once. Not reported through
   * `onTrouble`.
   */
  stop(message = 'Stopped.') {
    if (this.broken) return;
    this.rejectAll(new EngineError(message, 'stopped'));
    if (this.worker) this.worker.terminate();
    this.worker = null;
    this.start();
  }

  fail(message) {
    this.broken = message;
    this.rejectAll(new EngineError(message, 'broken'));
    if (this.worker) this.worker.terminate();
    this.worker = null;
    this.generation += 1;
    this.onTrouble(message, 'broken');
  }

  rejectAll(error) {
    const jobs = [...this.pending.values()];
    this.pending.clear();
    for (const job of jobs) job.reject(error);
  }

  send(payload, onProgress = null) {
    if (this.broken || !this.worker) {
      return Promise.reject(new EngineError(this.broken || 'The calculation part of the page is not running.', 'broken'));
    }
    const id = this.nextId++;
    return new Promise((resolve, reject) => {
      this.pending.set(id, { resolve, reject, onProgress });
      this.worker.postMessage({ ...payload, id });
    });
  }

  /**
   * Fits a model. Resolves with the parsed `{ok: report}` or `{error, kind}`
   * object from the wasm; rejects with an EngineError when the calculation
   * itself stopped.
   * @param {Uint8Array} bytes  the file's bytes (copied to the worker)
   * @param {object|string} request  the fit request, or its JSON text
   */
  fit(bytes, request) {
    const text = typeof request === 'string' ? request : JSON.stringify(request);
    return this.send({ type: 'fit', bytes, request: text });
  }

  /**
   * Reads the bytes as a table and profiles its columns. Resolves with the
   * parsed `{ok: {load, columns, preview, codes}}` or `{error, kind}` object
   * from the wasm; rejects with an EngineError as `fit` does, and with kind
   * 'stopped' after `stop()` (how a load is cancelled).
   * @param {Uint8Array} bytes  the file's bytes (copied to the worker)
   * @param {object|string} request  the inspect request, or its JSON text
   * @param {(share: number) => void} [onProgress]  the part of the file
   *   read, 0..1, now and then while it is read, and 1 at the end
   */
  inspect(bytes, request = {}, onProgress = null) {
    const text = typeof request === 'string' ? request : JSON.stringify(request);
    return this.send({ type: 'inspect', bytes, request: text }, onProgress || null);
  }

  /**
   * Fits a model and runs every check on it. Resolves with the parsed
   * `{ok: {check, figures}}` or `{error, kind}`; rejects as `fit` does.
   * @param {Uint8Array} bytes  the file's bytes (copied to the worker)
   * @param {object|string} request  a fit request, or its JSON text
   */
  check(bytes, request) {
    const text = typeof request === 'string' ? request : JSON.stringify(request);
    return this.send({ type: 'check', bytes, request: text });
  }

  /**
   * Searches for the terms. Resolves with the parsed `{ok: SelectReport}` or
   * `{error, kind}`; rejects as `fit` does, and with kind 'stopped' after
   * `stop()`.
   * @param {Uint8Array} bytes  the file's bytes (copied to the worker)
   * @param {object|string} request  the selection request, or its JSON text
   * @param {(share: number) => void} [onProgress]  the part of the subsets
   *   covered, 0..1, now and then while it runs, and 1 at the end
   */
  select(bytes, request, onProgress) {
    const text = typeof request === 'string' ? request : JSON.stringify(request);
    return this.send({ type: 'select', bytes, request: text }, onProgress || null);
  }

  /**
   * The columns the model of a fit request reads, for the one-case form.
   * Resolves with the parsed `{ok: {response, transformed, inputs}}` or
   * `{error, kind}`; rejects as `fit` does.
   */
  modelInputs(bytes, request) {
    const text = typeof request === 'string' ? request : JSON.stringify(request);
    return this.send({ type: 'inputs', bytes, request: text });
  }

  /**
   * Predicts new cases. Resolves with the parsed `{ok: PredictReport}` or
   * `{error, kind}`; rejects as `fit` does.
   * @param {Uint8Array} bytes  the data the model is fitted to
   * @param {Uint8Array} newBytes  the new cases (a file, a paste or the form's row)
   * @param {object|string} request  a fit request with `new: {paste, sheet, header_row, decimal}`
   */
  predict(bytes, newBytes, request) {
    const text = typeof request === 'string' ? request : JSON.stringify(request);
    return this.send({ type: 'predict', bytes, newBytes, request: text });
  }

  /**
   * Calls one of the wasm's exports by name in the worker (formula_bytes,
   * export_tsv, export_workbook, export_report, sha256_hex, session_save,
   * session_open, model_choices, equation_text). Resolves with the parsed `{ok}` or
   * `{error, kind}`; rejects as `fit` does.
   * @param {string} fn
   * @param {Array<string|Uint8Array>} args  its arguments in order
   */
  exportCall(fn, args) {
    return this.send({ type: 'export', fn, args });
  }

  /** Test hook: the worker answers as if the wasm had panicked. */
  pretendPanicForTest() {
    return this.send({ type: 'pretend-panic' });
  }

  /** Test hook: the wasm panics for real (panic_for_test). */
  realPanicForTest() {
    return this.send({ type: 'real-panic' });
  }

  /** Test hook: makes the worker throw, as a crash would. */
  crashForTest() {
    if (this.worker) this.worker.postMessage({ type: 'die', id: 0 });
  }
}

/**
 * Draws figures on canvases with a main-thread instance of the wasm
 * (`draw_figure`). It is started on first use; `draw` resolves with '' or
 * the problem in plain words, and never rejects.
 */
export class Painter {
  /** @param {Uint8Array} wasm  the same wasm bytes the worker runs */
  constructor(wasm) {
    this.wasm = wasm;
    this.ready = null;
    this.broken = null;
  }

  start() {
    if (!this.ready) {
      this.ready = this.instantiate().then(() => true, (e) => {
        this.broken = `The figures cannot be drawn in this browser: ${e && e.message ? e.message : e}`;
        return false;
      });
    }
    return this.ready;
  }

  async instantiate() {
    try {
      drawingGlue.initSync({ module: this.wasm });
      return;
    } catch (e) {
      // Some browsers refuse to compile a large module synchronously on
      // the main thread; the asynchronous way gives the same instance.
      if (!(e instanceof RangeError)) throw e;
    }
    const module = await WebAssembly.compile(this.wasm);
    await drawingGlue.default({ module_or_path: module });
  }

  /**
   * Draws one figure (an element of a check's `figures`) on the canvas
   * with this id.
   * @param {string} canvasId
   * @param {object} figure
   */
  async draw(canvasId, figure) {
    await this.start();
    if (this.broken) return this.broken;
    try {
      return drawingGlue.draw_figure(canvasId, JSON.stringify(figure));
    } catch (e) {
      // A trap leaves this instance unusable: later figures say so too.
      let message = null;
      try { message = drawingGlue.last_panic() ?? null; } catch (_) { /* unusable */ }
      this.broken = message || `The figures could not be drawn (an internal error, which is a bug: ${e && e.message ? e.message : e}).`;
      return this.broken;
    }
  }
}

// The one module that talks to the worker. It starts the worker from its
// data: URL, hands it the wasm bytes, sends inspect and fit requests and
// matches the answers to them. When the worker dies or reports a panic, it rejects what
// was waiting, says so through `onTrouble`, and starts a fresh worker; the
// data stay with the caller on the main thread.

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

  send(payload) {
    if (this.broken || !this.worker) {
      return Promise.reject(new EngineError(this.broken || 'The calculation part of the page is not running.', 'broken'));
    }
    const id = this.nextId++;
    return new Promise((resolve, reject) => {
      this.pending.set(id, { resolve, reject });
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
   * parsed `{ok: {load, columns, preview}}` or `{error, kind}` object from
   * the wasm; rejects with an EngineError as `fit` does.
   * @param {Uint8Array} bytes  the file's bytes (copied to the worker)
   * @param {object|string} request  the inspect request, or its JSON text
   */
  inspect(bytes, request = {}) {
    const text = typeof request === 'string' ? request : JSON.stringify(request);
    return this.send({ type: 'inspect', bytes, request: text });
  }

  /** Test hook: the worker answers as if the wasm had panicked. */
  pretendPanicForTest() {
    return this.send({ type: 'pretend-panic' });
  }

  /** Test hook: makes the worker throw, as a crash would. */
  crashForTest() {
    if (this.worker) this.worker.postMessage({ type: 'die', id: 0 });
  }
}

// The worker: loads the wasm and answers inspect, fit, check and select
// messages. It holds no statistics; every number comes from the wasm
// (`inspect_progress`, `fit_bytes`, `check_bytes`, `select_bytes`,
// `model_inputs`, `predict_bytes`), and so does every export (the formula,
// tab-separated text, the workbook, the report, the equation, SHA-256 and
// the session file).
//
// The build (www/tools/inline.mjs) puts the wasm-bindgen glue in front of
// this file and removes the import line below, so that the whole worker is
// one module that starts from a data: URL.
import {
  initSync, check_bytes, equation_text, export_report, export_tsv, export_workbook, fit_bytes, formula_bytes, inspect_progress,
  last_panic, model_choices, model_inputs, panic_for_test, predict_bytes, select_bytes, session_open, session_save, sha256_hex,
} from './plumbline.js';

// Messages in:
//   {type: 'init', wasm: Uint8Array}              -> {type: 'ready'} | {type: 'failed', message}
//   {type: 'inspect', id, bytes: Uint8Array, request}
//   {type: 'fit', id, bytes: Uint8Array, request}
//   {type: 'check', id, bytes: Uint8Array, request}
//   {type: 'select', id, bytes: Uint8Array, request}
//   {type: 'inputs', id, bytes: Uint8Array, request}   (the model's input columns)
//   {type: 'predict', id, bytes: Uint8Array, newBytes: Uint8Array, request}
//   {type: 'export', id, fn, args}   one of the exports below, with its
//                                     arguments in order (text or bytes)
//                                                  -> {type: 'result', id, json}
//                                                  | {type: 'panic', id, message}
//     a select also sends {type: 'progress', id, share} on the way, share
//     being the part (0..1) of the subsets covered, and so does an inspect,
//     share being the part of the file read. A search or a load is stopped
//     by ending the worker: the wasm call runs to its end once started, and
//     no message reaches the worker while it runs.
//   {type: 'die', id}  (test hook) throws outside any handler, so that the
//                      page sees the worker's error event.
//   {type: 'pretend-panic', id}  (test hook) answers as a panic would.
//   {type: 'real-panic', id}  (test hook) calls the wasm's panic_for_test,
//                      which panics inside Rust: the panic hook's message
//                      comes back as a panic answer.
let ready = false;

/** At most this often (ms) a progress message, unless the share moved a lot. */
const PROGRESS_EVERY_MS = 80;

function panicMessage(e) {
  let message = null;
  try {
    message = last_panic() ?? null;
  } catch (_) {
    // The instance may be unusable after a trap; the thrown error is all we have.
  }
  return message ?? `The calculation stopped on an internal error, which is a bug: ${e && e.message ? e.message : e}`;
}

/** A progress callback for the wasm that posts the share (and the phase, when it says one), not too often. */
function progressPoster(id) {
  let lastTime = 0;
  let lastShare = -1;
  let lastPhase = null;
  return (share, phase = null) => {
    const now = Date.now();
    if (share >= 1 || phase !== lastPhase || share - lastShare >= 0.02 || now - lastTime >= PROGRESS_EVERY_MS) {
      lastTime = now;
      lastShare = share;
      lastPhase = phase;
      self.postMessage({ type: 'progress', id, share, phase });
    }
  };
}

/**
 * The exports the page may call by name (src/wasm_export.rs and
 * src/wasm.rs); each answers JSON text. sha256_hex answers the bare
 * digest, so it is wrapped the same way.
 */
const EXPORTS = {
  formula_bytes: (bytes, request) => formula_bytes(bytes, request),
  export_tsv: (what, resultJson) => export_tsv(what, resultJson),
  export_workbook: (bundleJson) => export_workbook(bundleJson),
  export_report: (bundleJson) => export_report(bundleJson),
  sha256_hex: (bytes) => JSON.stringify({ ok: sha256_hex(bytes) }),
  session_save: (bytes, request) => session_save(bytes, request),
  session_open: (sessionText, bytes) => session_open(sessionText, bytes),
  model_choices: (request) => model_choices(request),
  equation_text: (fitJson) => equation_text(fitJson),
};

function runExport(msg) {
  const f = Object.prototype.hasOwnProperty.call(EXPORTS, msg.fn) ? EXPORTS[msg.fn] : null;
  if (!f) return JSON.stringify({ error: `The page asked for an export the calculation does not have (${String(msg.fn)}).`, kind: 'request' });
  return f(...(msg.args || []));
}

function run(msg) {
  switch (msg.type) {
    case 'fit': return fit_bytes(msg.bytes, msg.request);
    case 'check': return check_bytes(msg.bytes, msg.request);
    case 'select': return select_bytes(msg.bytes, msg.request, progressPoster(msg.id));
    case 'inputs': return model_inputs(msg.bytes, msg.request);
    case 'predict': return predict_bytes(msg.bytes, msg.newBytes, msg.request);
    case 'export': return runExport(msg);
    case 'real-panic': return panic_for_test();
    default: return inspect_progress(msg.bytes, msg.request, progressPoster(msg.id));
  }
}

self.onmessage = (event) => {
  const msg = event.data || {};
  switch (msg.type) {
    case 'init': {
      try {
        initSync({ module: msg.wasm });
        ready = true;
        self.postMessage({ type: 'ready' });
      } catch (e) {
        self.postMessage({ type: 'failed', message: String(e && e.message ? e.message : e) });
      }
      return;
    }
    case 'inspect':
    case 'fit':
    case 'check':
    case 'select':
    case 'inputs':
    case 'predict':
    case 'export':
    case 'real-panic': {
      if (!ready) {
        self.postMessage({ type: 'panic', id: msg.id, message: 'The calculation part of the page was not ready.' });
        return;
      }
      let json;
      try {
        json = run(msg);
      } catch (e) {
        // A Rust panic aborts the wasm call; the hook kept its message.
        self.postMessage({ type: 'panic', id: msg.id, message: panicMessage(e) });
        return;
      }
      self.postMessage({ type: 'result', id: msg.id, json });
      return;
    }
    case 'pretend-panic': {
      // Test hook: answers as a panic would, without one.
      self.postMessage({ type: 'panic', id: msg.id, message: 'plumbline stopped on an internal error, which is a bug: (a pretend panic from the test hook)' });
      return;
    }
    case 'die': {
      setTimeout(() => {
        throw new Error('stopped on purpose by the test hook');
      }, 0);
      return;
    }
    default:
      self.postMessage({ type: 'panic', id: msg.id, message: `Unknown message type ${String(msg.type)}.` });
  }
};

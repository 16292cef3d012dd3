// Times one call of the wasm build in node, as the page's worker makes it:
// the bytes are already in memory, the call copies them into wasm memory,
// reads, computes and returns JSON.
//
//   node tests/bench/wasm.mjs PKG_DIR fit|select|inspect FILE 'REQUEST_JSON' [REPEATS]
//
// PKG_DIR is the output of `wasm-bindgen --target nodejs`. Prints
// {"seconds": best of REPEATS, "first": the first call, "ok": true|false, "error": ...}.
import { readFileSync } from 'node:fs';
import { createRequire } from 'node:module';
import { resolve } from 'node:path';

const [pkgDir, mode, file, request, repeats = '1'] = process.argv.slice(2);
if (!pkgDir || !mode || !file || request === undefined) {
  console.error('usage: node wasm.mjs PKG_DIR fit|select|inspect FILE REQUEST_JSON [REPEATS]');
  process.exit(2);
}
const require = createRequire(import.meta.url);
const wasm = require(resolve(pkgDir, 'plumbline.js'));
const bytes = new Uint8Array(readFileSync(file));
const call = {
  fit: () => wasm.fit_bytes(bytes, request),
  select: () => wasm.select_bytes(bytes, request, () => true),
  inspect: () => wasm.inspect(bytes, request),
}[mode];
if (!call) {
  console.error(`unknown mode ${mode}`);
  process.exit(2);
}
// The first call also pays for V8's tiering (baseline code first, the
// optimised code later), so it is reported apart from the best.
let best = Infinity;
let first = null;
let out = '';
for (let i = 0; i < Number(repeats); i++) {
  const t0 = performance.now();
  out = call();
  const s = (performance.now() - t0) / 1000;
  if (first === null) first = s;
  best = Math.min(best, s);
}
let parsed = {};
try {
  parsed = JSON.parse(out);
} catch (e) {
  parsed = { error: `not JSON: ${String(e)}` };
}
const summary = { seconds: best, first, ok: 'ok' in parsed, error: parsed.error ?? null };
if (mode === 'select' && parsed.ok) summary.models_examined = parsed.ok.models_examined;
console.log(JSON.stringify(summary));

// Writes dist/plumbline.html: one self-contained page with the CSS, the app
// JS (the wasm-bindgen glue for drawing on the main thread + engine.js +
// app.js as one module script), the worker (the same glue + worker.js, as a
// data: URL module worker), the wasm (base64) and the demo CSV all inlined. No dependencies; run from any directory:
//
//   node www/tools/inline.mjs [--pkg target/www-pkg] [--out dist/plumbline.html]
//
// It checks what it writes: the CSP meta is there with connect-src 'none',
// nothing inlined can end its element early, the scripts parse, and no
// remote address appears in the page's text.
import { readFileSync, writeFileSync, mkdirSync, mkdtempSync, rmSync } from 'node:fs';
import { dirname, join, resolve } from 'node:path';
import { fileURLToPath } from 'node:url';
import { execFileSync } from 'node:child_process';
import { tmpdir } from 'node:os';

const here = dirname(fileURLToPath(import.meta.url));
const root = resolve(here, '..', '..');
const src = join(root, 'www', 'src');

function arg(name, fallback) {
  const i = process.argv.indexOf(name);
  return i >= 0 && process.argv[i + 1] ? resolve(process.argv[i + 1]) : fallback;
}
const pkg = arg('--pkg', join(root, 'target', 'www-pkg'));
const out = arg('--out', join(root, 'dist', 'plumbline.html'));

function fail(message) {
  console.error(`inline.mjs: ${message}`);
  process.exit(1);
}

function read(path) {
  try {
    return readFileSync(path, 'utf8');
  } catch (e) {
    fail(`cannot read ${path}: ${e.message}`);
  }
}

function removeExactlyOnce(text, pattern, what) {
  const matches = text.match(new RegExp(pattern.source, pattern.flags.includes('g') ? pattern.flags : `${pattern.flags}g`));
  if (!matches || matches.length !== 1) fail(`expected exactly one ${what}, found ${matches ? matches.length : 0}`);
  return text.replace(pattern, '');
}

/** Text for inside <script> or <style>: nothing may close the element. */
function checkRawText(text, tag, what) {
  const lower = text.toLowerCase();
  if (lower.includes(`</${tag}`)) fail(`${what} contains "</${tag}", which would end the element early`);
  if (lower.includes('<!--')) fail(`${what} contains "<!--", which changes how the element is parsed`);
  return text;
}

function checkModuleSyntax(code, what) {
  const dir = mkdtempSync(join(tmpdir(), 'plumbline-inline-'));
  const file = join(dir, 'check.mjs');
  try {
    writeFileSync(file, code);
    execFileSync(process.execPath, ['--check', file], { stdio: 'pipe' });
  } catch (e) {
    fail(`${what} does not parse as a module:\n${e.stderr ? e.stderr.toString() : e.message}`);
  } finally {
    rmSync(dir, { recursive: true, force: true });
  }
}

// The wasm-bindgen glue. Its whole-line comments that cite a web address
// (wasm-bindgen quotes documentation) go: the page must name no remote place.
const glue = read(join(pkg, 'plumbline.js')).replace(/^[ \t]*\/\/.*\b(?:https?|wss?|ftp):\/\/.*\n/gim, '');

/**
 * The glue as an expression whose value is its namespace object, for the
 * page's main thread: `export` is taken off its declarations and the export
 * list becomes the object returned, so that its names stay its own.
 */
function glueNamespace(code) {
  const names = [];
  let body = code.replace(/^export (?:async function|function|class|const|let) ([A-Za-z_$][\w$]*)/gm, (m, name) => {
    names.push(`${name}: ${name}`);
    return m.replace(/^export /, '');
  });
  body = body.replace(/^export \{([^}]*)\};?[ \t]*\n?/gm, (m, list) => {
    for (const item of list.split(',').map((x) => x.trim()).filter(Boolean)) {
      const [local, as] = item.split(/\s+as\s+/);
      names.push(`${as || local}: ${local}`);
    }
    return '';
  });
  if (/^\s*(?:export|import)\b/m.test(body)) fail('the glue has an import or export the bundler does not handle');
  return `(() => {\n${body}\nreturn Object.freeze({ ${names.join(', ')} });\n})()`;
}

// The worker: the glue, then worker.js without its import of the glue.
let workerJs = read(join(src, 'worker.js'));
workerJs = removeExactlyOnce(workerJs, /^import \{[^}]*\} from '\.\/plumbline\.js';\n/m, "import of './plumbline.js' in worker.js");
if (/^\s*import[\s{]/m.test(workerJs) || /^\s*import[\s{]/m.test(glue)) fail('the worker would still import a module');
const workerSrc = `${glue}\n// ---- worker.js\n${workerJs}`;
checkModuleSyntax(workerSrc, 'the worker');
const workerUrl = `data:text/javascript;base64,${Buffer.from(workerSrc, 'utf8').toString('base64')}`;

// The page script: engine.js with its exports made plain, then app.js
// without its import of engine.js.
let engineJs = read(join(src, 'engine.js'));
// engine.js's Painter draws with a main-thread instance of the same wasm.
const glueImport = /^import \* as ([A-Za-z_$][\w$]*) from '\.\/plumbline\.js';\n/m;
const glueName = (engineJs.match(glueImport) || [])[1];
if (!glueName) fail("expected engine.js to import the glue as: import * as NAME from './plumbline.js';");
engineJs = removeExactlyOnce(engineJs, glueImport, "import of './plumbline.js' in engine.js");
engineJs = `const ${glueName} = ${glueNamespace(glue)};\n${engineJs}`;
engineJs = engineJs.replace(/^export (?=(?:async function|function|class|const|let)\b)/gm, '');
if (/^\s*(?:export|import)\b/m.test(engineJs)) fail('engine.js has an import or export the bundler does not handle');
let appJs = read(join(src, 'app.js'));
appJs = removeExactlyOnce(appJs, /^import \{[^}]*\} from '\.\/engine\.js';\n/m, "import of './engine.js' in app.js");
if (/^\s*(?:export|import)\b/m.test(appJs)) fail('app.js has an import or export the bundler does not handle');
const pageJs = `// ---- engine.js\n${engineJs}\n// ---- app.js\n${appJs}`;
checkModuleSyntax(pageJs, 'the page script');
checkRawText(pageJs, 'script', 'the page script');

const css = checkRawText(read(join(src, 'style.css')), 'style', 'style.css');

const wasm = readFileSync(join(pkg, 'plumbline_bg.wasm'));
const wasmB64 = wasm.toString('base64');
const demoCsv = checkRawText(read(join(root, 'demo-data', 'building-energy.csv')), 'script', 'the demo CSV');

let html = read(join(src, 'index.html'));
const csp = html.match(/<meta http-equiv="Content-Security-Policy" content="([^"]*)">/);
if (!csp) fail('index.html has no Content-Security-Policy meta');
if (!csp[1].includes("connect-src 'none'")) fail("the CSP must contain connect-src 'none'");
if (/https?:|wss?:/i.test(csp[1])) fail('the CSP must not allow a remote source');

const data = [
  `<script type="application/octet-stream" id="plumbline-wasm">${wasmB64}</script>`,
  `<script type="text/plain" id="plumbline-worker">${workerUrl}</script>`,
  `<script type="text/csv" id="plumbline-demo" data-name="building-energy.csv">${demoCsv}</script>`,
].join('\n');

function place(marker, text) {
  const token = `<!-- inline:${marker} -->`;
  const at = html.indexOf(token);
  if (at < 0 || html.indexOf(token, at + 1) >= 0) fail(`index.html must hold ${token} exactly once`);
  html = html.slice(0, at) + text + html.slice(at + token.length);
}
place('style', `<style>\n${css}</style>`);
place('data', data);
place('script', `<script type="module">\n${pageJs}</script>`);

// Nothing in the readable parts may point at a remote place.
const readable = [html.replace(wasmB64, '').replace(workerUrl, ''), workerSrc].join('\n');
const remote = readable.match(/\b(?:https?|wss?|ftp):\/\/[^\s"'<>)]*/i);
if (remote) fail(`the page mentions a remote address: ${remote[0]}`);

mkdirSync(dirname(out), { recursive: true });
writeFileSync(out, html);
const kib = (n) => `${(n / 1024).toFixed(1)} KiB`;
console.log(`wrote ${out}: ${kib(Buffer.byteLength(html))} (wasm ${kib(wasm.length)}, worker ${kib(Buffer.byteLength(workerSrc))}, page script ${kib(Buffer.byteLength(pageJs))}, CSS ${kib(Buffer.byteLength(css))}, demo CSV ${kib(Buffer.byteLength(demoCsv))})`);

// Browser tests of dist/plumbline.html in Chromium, driven by playwright-core.
//
//   bash www/build.sh && cargo build --release && node tests/browser/run.mjs
//
// Environment: CHROMIUM (default /usr/bin/chromium), HEADED=1 to watch.
// Exits non-zero when a test fails. Screenshots go to tests/browser/screenshots/.
import { test, before, after } from 'node:test';
import assert from 'node:assert/strict';
import { createRequire } from 'node:module';
import { execFileSync, spawnSync } from 'node:child_process';
import { existsSync, mkdirSync, readFileSync, readdirSync, statSync, truncateSync, unlinkSync, writeFileSync } from 'node:fs';
import { isDeepStrictEqual } from 'node:util';
import { dirname, join, resolve } from 'node:path';
import { fileURLToPath, pathToFileURL } from 'node:url';
import { createHash, randomBytes } from 'node:crypto';

const here = dirname(fileURLToPath(import.meta.url));
const root = resolve(here, '..', '..');
const pagePath = join(root, 'dist', 'plumbline.html');
const cliPath = join(root, 'target', 'release', 'plumbline');
const shots = join(here, 'screenshots');
const nistDir = join(root, 'tests', 'data', 'nist-strd-lls');
const demoCsv = join(root, 'demo-data', 'building-energy.csv');
const chromiumPath = process.env.CHROMIUM || '/usr/bin/chromium';

const missing = [];
if (!existsSync(pagePath)) missing.push(`${pagePath} (run: bash www/build.sh)`);
if (!existsSync(cliPath)) missing.push(`${cliPath} (run: cargo build --release)`);
if (!existsSync(chromiumPath)) missing.push(`${chromiumPath} (set CHROMIUM to a Chromium binary)`);
if (!existsSync(join(root, 'www', 'node_modules', 'playwright-core'))) missing.push('www/node_modules/playwright-core (run: npm ci --prefix www)');
if (missing.length) {
  console.error(`tests/browser/run.mjs: missing:\n  ${missing.join('\n  ')}\nBuild first: bash www/build.sh && cargo build --release`);
  process.exit(1);
}

// A build older than its sources would test old code: say so and stop.
function newestMtime(dir, keep) {
  let newest = { t: 0, file: '' };
  for (const e of readdirSync(dir, { withFileTypes: true })) {
    const p = join(dir, e.name);
    if (e.isDirectory()) {
      const n = newestMtime(p, keep);
      if (n.t > newest.t) newest = n;
    } else if (keep(e.name)) {
      const t = statSync(p).mtimeMs;
      if (t > newest.t) newest = { t, file: p };
    }
  }
  return newest;
}
const cargoToml = { t: statSync(join(root, 'Cargo.toml')).mtimeMs, file: join(root, 'Cargo.toml') };
// The native binary does not compile src/wasm.rs, so a change there does not relink it.
const rustSources = [newestMtime(join(root, 'src'), (n) => n.endsWith('.rs') && n !== 'wasm.rs'), cargoToml].sort((a, b) => b.t - a.t)[0];
const allRust = [newestMtime(join(root, 'src'), (n) => n.endsWith('.rs')), cargoToml].sort((a, b) => b.t - a.t)[0];
const pageSources = [allRust, newestMtime(join(root, 'www', 'src'), () => true),
  newestMtime(join(root, 'www', 'tools'), () => true)].sort((a, b) => b.t - a.t)[0];
const stale = [];
if (statSync(cliPath).mtimeMs < rustSources.t) stale.push(`${cliPath} is older than ${rustSources.file} (run: cargo build --release)`);
if (statSync(pagePath).mtimeMs < pageSources.t) stale.push(`${pagePath} is older than ${pageSources.file} (run: bash www/build.sh)`);
if (stale.length) {
  console.error(`tests/browser/run.mjs: out of date:\n  ${stale.join('\n  ')}`);
  process.exit(1);
}

const require = createRequire(join(root, 'www', 'package.json'));
const { chromium } = require('playwright-core');

const pageUrl = pathToFileURL(pagePath).href;
const DEMO_RESPONSE = 'log(energy_mwh)';
// The demo's default terms are the column profile's suggestions, in column
// order, without the identifiers and the response column.
const DEMO_TERMS = 'cat(climate_zone), log(floor_area_m2), log(occupants), building_age, mean_outdoor_temp_c, cat(hvac_type), retrofit';
const DEMO_ROWS_LINE = '234 of 240 rows used. Left out: 2 rows with a missing value in occupants (file rows 58, 165); '
  + '3 rows with a missing value in building_age (file rows 24, 119, 202); 1 row with a missing value in mean_outdoor_temp_c (file row 91).';
const files = join(root, 'tests', 'data', 'files');
const demoXlsx = join(root, 'demo-data', 'building-energy.xlsx');
const COEF_FIELDS = ['estimate', 'std_error', 't', 'p_value', 'ci_low', 'ci_high'];

mkdirSync(shots, { recursive: true });

let browser;
let context;
let page;
const seenRequests = new Set(); // the Request objects, as page and context both report them
const requests = []; // every request seen, page and workers alike
const dataRequests = []; // data: URLs, kept apart (not network)
const dialogs = [];
const pageErrors = [];
const workers = [];
const routed = []; // every URL that reached the network layer (the route below), allowed or not
const refused = []; // of them, those the route refused: anything but the page itself

/**
 * Installed in every page of the session before its own scripts run: it
 * records any write to localStorage, sessionStorage, IndexedDB, the Cache
 * API or cookies, and every Content-Security-Policy violation the page
 * reports. The CSP has no 'unsafe-eval', so any use of eval, the Function
 * constructor or a string timer by the page's code throws and is reported
 * as a violation of script-src with the blocked URI "eval"; that report is
 * the eval hook. (Replacing window.eval itself would break the test
 * driver, which evaluates through it; its own evaluations bypass the CSP
 * and are not reported.) The tests read the records through
 * window.__plumblineWatch.
 */
function watchPage() {
  const seen = { storage: [], violations: [] };
  Object.defineProperty(window, '__plumblineWatch', { value: seen });
  const note = (what) => seen.storage.push(what);
  for (const m of ['setItem', 'removeItem', 'clear']) {
    const real = Storage.prototype[m];
    Storage.prototype[m] = function storageHook(...args) {
      note(`${this === window.sessionStorage ? 'sessionStorage' : 'localStorage'}.${m}(${args.map(String).join(', ').slice(0, 60)})`);
      return real.apply(this, args);
    };
  }
  if (window.indexedDB) {
    const realOpen = IDBFactory.prototype.open;
    IDBFactory.prototype.open = function openHook(...args) {
      note(`indexedDB.open(${String(args[0])})`);
      return realOpen.apply(this, args);
    };
  }
  if (window.caches) {
    const realCacheOpen = CacheStorage.prototype.open;
    CacheStorage.prototype.open = function cacheHook(...args) {
      note(`caches.open(${String(args[0])})`);
      return realCacheOpen.apply(this, args);
    };
  }
  const cookie = Object.getOwnPropertyDescriptor(Document.prototype, 'cookie');
  if (cookie && cookie.set) {
    Object.defineProperty(Document.prototype, 'cookie', {
      get() { return cookie.get.call(this); },
      set(v) { note(`document.cookie = ${String(v).slice(0, 60)}`); cookie.set.call(this, v); },
      configurable: true,
    });
  }
  document.addEventListener('securitypolicyviolation', (e) => seen.violations.push(`${e.effectiveDirective}: ${e.blockedURI}`));
}

/** What the watch of the current page has recorded, and what storage holds now. */
async function watched() {
  return page.evaluate(async () => {
    const w = window.__plumblineWatch;
    const dbs = indexedDB.databases ? (await indexedDB.databases()).map((d) => d.name) : [];
    let cacheKeys = [];
    try { cacheKeys = window.caches ? await caches.keys() : []; } catch (_) { cacheKeys = []; }
    return {
      installed: !!w,
      evals: w ? w.violations.filter((v) => v.endsWith(': eval')) : [],
      storage: w ? w.storage : [],
      violations: w ? w.violations : [],
      localStorage: localStorage.length,
      sessionStorage: sessionStorage.length,
      indexedDB: dbs,
      caches: cacheKeys,
      cookie: document.cookie,
    };
  });
}

/** Asserts that the page has used no eval, stored nothing and broken no CSP rule. */
async function assertWatchClean(what) {
  const w = await watched();
  assert.ok(w.installed, `${what}: the watch is installed`);
  assert.deepEqual(w.evals, [], `${what}: no eval, Function constructor or string timer (each would be refused by the CSP and reported)`);
  assert.deepEqual(w.violations, [], `${what}: no Content-Security-Policy violation`);
  assert.deepEqual(w.storage, [], `${what}: nothing written to storage`);
  assert.equal(w.localStorage, 0, `${what}: localStorage is empty`);
  assert.equal(w.sessionStorage, 0, `${what}: sessionStorage is empty`);
  assert.deepEqual(w.indexedDB, [], `${what}: no IndexedDB database`);
  assert.deepEqual(w.caches, [], `${what}: no Cache API cache`);
  assert.equal(w.cookie, '', `${what}: no cookie`);
}

function recordRequest(req) {
  if (seenRequests.has(req)) return;
  seenRequests.add(req);
  const url = req.url();
  // data: URLs (the worker) and blob: URLs (the page's own downloads) are
  // inside the page, not network; they are kept apart.
  if (url.startsWith('data:') || url.startsWith('blob:')) dataRequests.push(url.slice(0, 60));
  else requests.push(url);
}

/** Requests that are not the page itself (with or without a fragment). */
function foreignRequests() {
  return [...new Set(requests)].filter((u) => u.split('#')[0] !== pageUrl);
}

async function shot(name) {
  await page.screenshot({ path: join(shots, `${name}.png`), fullPage: true });
}

function cliFit(file, { response, terms, intercept = true, level, hc3 = false, exclude }, input) {
  const args = ['fit', file, '--response', response, '--terms', terms, '--json'];
  if (exclude && exclude.length) args.push('--exclude-rows', exclude.join(','));
  if (!intercept) args.push('--no-intercept');
  if (level !== undefined) args.push('--level', String(level));
  if (hc3) args.push('--hc3');
  return JSON.parse(execFileSync(cliPath, args, { encoding: 'utf8', maxBuffer: 64 << 20, input }));
}

function cliProfile(file) {
  return JSON.parse(execFileSync(cliPath, ['profile', file, '--json'], { encoding: 'utf8', maxBuffer: 64 << 20 }));
}

/** Log relative error: digits of agreement of a with b (absolute when b = 0). */
function lre(a, b) {
  if (a === b) return Infinity;
  if (typeof a !== 'number' || typeof b !== 'number') return -Infinity;
  const err = b === 0 ? Math.abs(a) : Math.abs(a - b) / Math.abs(b);
  return err === 0 ? Infinity : -Math.log10(err);
}

function relClose(a, b, tol) {
  if (a === b) return true;
  if (typeof a !== 'number' || typeof b !== 'number') return false;
  const scale = Math.max(Math.abs(b), Number.MIN_VALUE);
  return Math.abs(a - b) / scale <= tol;
}

/** The numbers in which two results differ: how many, the least LRE and where. */
function differences(a, b) {
  const out = { count: 0, least: Infinity, where: [] };
  const walk = (x, y, path) => {
    if (x && y && typeof x === 'object' && typeof y === 'object') {
      for (const k of new Set([...Object.keys(x), ...Object.keys(y)])) walk(x[k], y[k], path ? `${path}.${k}` : k);
    } else if (!isDeepStrictEqual(x, y)) {
      out.count++;
      out.least = Math.min(out.least, lre(x, y));
      const field = path.replace(/\.\d+\./g, '.').replace(/^coefficients\.|^hc3\./, '');
      if (!out.where.includes(field)) out.where.push(field);
    }
  };
  walk(a, b, '');
  return out;
}

/** A value as the page holds it in data-full: '' is JSON null. */
function fromFull(s) {
  if (s === '') return null;
  if (s === 'Infinity' || s === '-Infinity') return s;
  return Number(s);
}

async function openFresh(hash = '') {
  await page.goto(pageUrl + hash);
  // Ready when the worker answers a tiny fit through the test hook.
  const r = await page.evaluate(() => window.plumblineTest.fit('y,x\n1,1\n2,3\n4,4\n', { response: 'y', terms: 'x' }));
  assert.ok(r.ok, `the worker answers a tiny fit: ${JSON.stringify(r)}`);
}

/** Runs a page action that starts an inspection and waits until the page has its answer. */
async function afterInspect(action) {
  const before = await page.evaluate(() => window.plumblineTest.inspectsDone());
  await action();
  await page.waitForFunction((n) => window.plumblineTest.inspectsDone() > n, before, { timeout: 20000 });
}

/** Opens a file through the file input and waits until the page shows it. */
async function openFile(path, name = path.split('/').pop()) {
  await page.setInputFiles('#file-input', { name, mimeType: 'application/octet-stream', buffer: readFileSync(path) });
  await page.locator('#data-facts').filter({ hasText: name }).waitFor({ timeout: 15000 });
}

/** The row of the Columns panel for a column. */
function columnRow(name) {
  return page.locator(`#columns-table tbody tr[data-column="${name}"]`);
}

/** Runs a page action that starts a fit and waits until the page has its answer. */
async function afterFit(action) {
  const before = await page.evaluate(() => window.plumblineTest.fitsDone());
  await action();
  await page.waitForFunction((n) => window.plumblineTest.fitsDone() > n, before, { timeout: 20000 });
}

/** The demo loaded, with choices of the user's own, fitted. */
async function demoWithChoices() {
  await afterFit(() => page.click('#demo-button'));
  await page.selectOption('#response-transform', 'sqrt');
  await page.fill('#terms', 'log(floor_area_m2), cat(climate_zone)');
  await page.fill('#level', '90');
  await afterFit(() => page.click('#fit-button'));
  await assertCoefRows(6);
}

/** Waits for the prediction form of the latest fit (an earlier fit's form may still be on the page, about to be replaced). */
async function caseFormOfThisFit() {
  await page.waitForFunction(() => window.plumblineTest.caseFormReady(), null, { timeout: 15000 });
  await page.locator('#case-fields [data-column]').first().waitFor({ timeout: 15000 });
}

async function assertCoefRows(n) {
  assert.ok(await page.isVisible('#coef-table'), 'the result is shown');
  assert.equal(await page.locator('#coef-table tbody tr').count(), n, `${n} coefficient rows`);
}

async function coefTableFromPage() {
  return page.$$eval('#coef-table tbody tr', (rows) => rows.map((tr) => ({
    term: tr.querySelector('th').textContent,
    cells: [...tr.querySelectorAll('td.num')].map((td) => ({ shown: td.textContent, full: td.dataset.full, title: td.title })),
  })));
}

async function visibleText(selector) {
  const loc = page.locator(selector);
  await loc.waitFor({ state: 'visible', timeout: 15000 });
  return loc.textContent();
}

before(async () => {
  browser = await chromium.launch({
    executablePath: chromiumPath,
    headless: !process.env.HEADED,
    args: ['--no-sandbox', '--disable-gpu', '--disable-quic', '--no-first-run', '--disable-background-networking',
      '--disable-component-update', '--disable-sync'],
  });
  context = await browser.newContext({ viewport: { width: 1366, height: 768 } });
  context.on('request', recordRequest);
  await context.addInitScript(watchPage);
  // Everything that reaches the network layer passes here: the page itself
  // is let through, anything else is refused and kept (data: URLs do not
  // come here; they are not network).
  await context.route('**/*', (route) => {
    const url = route.request().url();
    routed.push(url);
    if (url.split('#')[0] === pageUrl) return route.continue();
    refused.push(url);
    return route.abort('blockedbyclient');
  });
  page = await context.newPage();
  page.on('request', recordRequest);
  page.on('worker', (w) => {
    workers.push(w.url().slice(0, 40));
  });
  page.on('dialog', (d) => {
    dialogs.push(`${d.type()}: ${d.message()}`);
    d.dismiss().catch(() => {});
  });
  page.on('pageerror', (e) => pageErrors.push(e.message));
});

after(async () => {
  if (browser) await browser.close();
});

test('the page loads, starts its worker and asks for nothing but itself', { timeout: 60000 }, async () => {
  await openFresh();
  await shot('01-loaded');
  assert.deepEqual(foreignRequests(), [], 'no request other than the page');
  assert.ok(workers.length >= 1 && workers.every((u) => u.startsWith('data:text/javascript')), `the worker comes from a data: URL (${workers.join(', ')})`);
  assert.deepEqual(pageErrors, [], 'no script error');
});

test('control: the request recorder sees a request made inside a worker', { timeout: 30000 }, async () => {
  // In a context of its own, so that its request does not count against the page.
  const ctl = await browser.newContext();
  const seen = [];
  ctl.on('request', (r) => seen.push(r.url()));
  try {
    const p = await ctl.newPage();
    p.on('request', (r) => seen.push(r.url()));
    await p.goto(pathToFileURL(join(root, 'www', 'package.json')).href);
    await p.evaluate(() => {
      const code = "fetch('http://127.0.0.1:9/worker-control').catch(() => {});";
      window.controlWorker = new Worker(`data:text/javascript,${encodeURIComponent(code)}`, { type: 'module' });
    });
    for (let i = 0; i < 50 && !seen.some((u) => u.includes('worker-control')); i++) await p.waitForTimeout(100);
  } finally {
    await ctl.close();
  }
  assert.ok(seen.some((u) => u.includes('worker-control')), `a worker's request is recorded (saw ${seen.join(', ')})`);
});

test('the CSP meta is there, with connect-src \'none\' and no remote source', { timeout: 30000 }, async () => {
  const csp = await page.$eval('meta[http-equiv="Content-Security-Policy"]', (m) => m.getAttribute('content'));
  assert.match(csp, /connect-src 'none'/);
  assert.match(csp, /default-src 'none'/);
  assert.doesNotMatch(csp, /https?:|wss?:|\*/, 'no remote or wildcard source');
  const external = await page.$$eval('[src], [href]', (els) => els
    .map((e) => e.getAttribute('src') || e.getAttribute('href'))
    .filter((u) => !(u.startsWith('#') || u.startsWith('data:'))));
  assert.deepEqual(external, [], 'no element loads anything from elsewhere');
  assertNoEvalInSource();
});

/** The page's scripts, the worker's too (inlined as a base64 data: URL), hold no eval or Function constructor. */
function assertNoEvalInSource() {
  const html = readFileSync(pagePath, 'utf8');
  const workerUrl = /<script type="text\/plain" id="plumbline-worker">data:text\/javascript;base64,([^<]*)<\/script>/.exec(html);
  assert.ok(workerUrl, 'the worker is inlined as a base64 data: URL');
  const workerSrc = Buffer.from(workerUrl[1], 'base64').toString('utf8');
  assert.match(workerSrc, /self\.onmessage/, 'the worker source decodes');
  const pageSrc = html.replace(/<script type="application\/octet-stream"[^>]*>[^<]*<\/script>/, '').replace(workerUrl[0], '');
  const forbidden = /\beval\s*\(|\bnew\s+Function\s*\(|\bFunction\s*\(\s*['"`]|\bset(?:Timeout|Interval)\s*\(\s*['"`]/;
  for (const [what, src] of [['the page', pageSrc], ['the worker', workerSrc]]) {
    const m = forbidden.exec(src);
    assert.equal(m, null, `${what} has no eval, Function constructor or string timer${m ? ` (found "${src.slice(Math.max(0, m.index - 40), m.index + 40)}")` : ''}`);
  }
}

test('control: the watch sees an eval and a storage write when there is one', { timeout: 30000 }, async () => {
  const ctl = await browser.newContext();
  try {
    await ctl.addInitScript(watchPage);
    const p = await ctl.newPage();
    await p.goto(pageUrl);
    const w = await p.evaluate(async () => {
      // As the page's own code would: from a script element, after an await
      // (what the test driver runs directly is exempt from the CSP until then).
      await new Promise((r) => setTimeout(r, 0));
      const script = document.createElement('script');
      script.textContent = "try { window.controlEval = eval('1 + 1'); } catch (e) { window.controlEval = e.name; }";
      document.body.append(script);
      localStorage.setItem('control', '1');
      localStorage.removeItem('control');
      indexedDB.open('control-db');
      await new Promise((r) => setTimeout(r, 300));
      return { ...window.__plumblineWatch, evalResult: window.controlEval };
    });
    assert.equal(w.evalResult, 'EvalError', 'the CSP refuses the eval');
    assert.deepEqual(w.violations, ['script-src: eval'], 'the eval is reported');
    assert.deepEqual(w.storage, ['localStorage.setItem(control, 1)', 'localStorage.removeItem(control)', 'indexedDB.open(control-db)']);
  } finally {
    await ctl.close();
  }
});

test('the CSP forbids every connection, from the page and from a worker, and eval', { timeout: 30000 }, async () => {
  // A context of its own, so that these attempts do not count against the session.
  const ctl = await browser.newContext();
  const reached = [];
  await ctl.route('**/*', (route) => {
    const url = route.request().url();
    if (url.startsWith('file:')) return route.continue();
    reached.push(url);
    return route.abort('blockedbyclient');
  });
  try {
    const p = await ctl.newPage();
    await p.goto(pageUrl);
    const out = await p.evaluate(async () => {
      const violations = [];
      document.addEventListener('securitypolicyviolation', (e) => violations.push(`${e.effectiveDirective} ${e.blockedURI}`));
      const tried = {};
      const attempt = async (name, f) => {
        try { tried[name] = `allowed: ${await f()}`; } catch (e) { tried[name] = `refused: ${e.name}`; }
      };
      await attempt('fetch', () => fetch('http://127.0.0.1:9/fetch').then((r) => r.status));
      await attempt('xhr', () => new Promise((resolve, reject) => {
        const x = new XMLHttpRequest();
        x.onload = () => resolve(x.status);
        x.onerror = () => reject(new TypeError('XHR failed'));
        x.open('GET', 'http://127.0.0.1:9/xhr');
        x.send();
      }));
      await attempt('websocket', () => new Promise((resolve, reject) => {
        const ws = new WebSocket('ws://127.0.0.1:9/ws');
        ws.onopen = () => resolve('open');
        ws.onerror = () => reject(new TypeError('WebSocket failed'));
      }));
      await attempt('eventsource', () => new Promise((resolve, reject) => {
        const es = new EventSource('http://127.0.0.1:9/es');
        es.onopen = () => resolve('open');
        es.onerror = () => { es.close(); reject(new TypeError('EventSource failed')); };
      }));
      // sendBeacon says true either way; the CSP report and the route below tell.
      navigator.sendBeacon('http://127.0.0.1:9/beacon', 'x');
      await attempt('image', () => new Promise((resolve, reject) => {
        const img = new Image();
        img.onload = () => resolve('loaded');
        img.onerror = () => reject(new TypeError('image failed'));
        img.src = 'http://127.0.0.1:9/img.png';
      }));
      await attempt('import', () => import('http://127.0.0.1:9/module.js').then(() => 'imported'));
      // eslint-disable-next-line no-eval
      await attempt('eval', () => eval('1 + 1'));
      await attempt('Function', () => new Function('return 1')());
      await attempt('worker fetch', () => new Promise((resolve, reject) => {
        const code = "fetch('http://127.0.0.1:9/worker').then((r) => postMessage('status ' + r.status), (e) => postMessage('refused ' + e.name));";
        const w = new Worker(`data:text/javascript,${encodeURIComponent(code)}`, { type: 'module' });
        w.onmessage = (e) => (String(e.data).startsWith('refused') ? reject(new TypeError(e.data)) : resolve(e.data));
        w.onerror = () => reject(new TypeError('worker error'));
      }));
      await new Promise((r) => setTimeout(r, 300));
      return { tried, violations };
    });
    for (const [name, result] of Object.entries(out.tried)) assert.match(result, /^refused/, `${name}: ${result}`);
    const directives = out.violations.map((v) => v.split(' ')[0]);
    assert.deepEqual(out.violations.filter((v) => v.startsWith('connect-src')).map((v) => v.split('/').pop()).sort(), ['beacon', 'es', 'fetch', 'ws', 'xhr'],
      `fetch, XHR, WebSocket, EventSource and a beacon are refused by connect-src (${out.violations.join('; ')})`);
    assert.ok(directives.includes('img-src') && directives.some((d) => d.startsWith('script-src')), out.violations.join('; '));
    assert.equal(out.violations.filter((v) => v.endsWith(' eval')).length, 2, 'eval and Function are refused by the CSP');
  } finally {
    await ctl.close();
  }
  assert.deepEqual(reached, [], 'no attempt reached the network');
});

test('the demo opens with one click and its fit equals the native CLI', { timeout: 60000 }, async () => {
  await openFresh();
  await afterFit(() => page.click('#demo-button'));
  await assertCoefRows(12);
  await page.screenshot({ path: join(shots, '02a-demo-what-the-window-shows-1366x768.png') });
  await shot('02-demo-fitted');

  assert.equal(await page.inputValue('#response-column'), 'energy_mwh');
  assert.equal(await page.inputValue('#response-transform'), 'log');
  assert.equal(await page.inputValue('#terms'), DEMO_TERMS);
  assert.match(await page.textContent('#data-facts'), /240 rows of data, 10 columns/);

  const cli = cliFit(demoCsv, { response: DEMO_RESPONSE, terms: DEMO_TERMS });
  const rows = await coefTableFromPage();
  assert.equal(rows.length, cli.coefficients.length, 'one row per coefficient');
  let compared = 0;
  rows.forEach((row, i) => {
    const c = cli.coefficients[i];
    assert.equal(row.term, c.term);
    COEF_FIELDS.forEach((f, j) => {
      const v = fromFull(row.cells[j].full);
      assert.ok(relClose(v, c[f], 1e-9), `${c.term} ${f}: page ${v}, CLI ${c[f]}`);
      assert.ok(row.cells[j].title.includes(row.cells[j].full), 'the tooltip holds the full value');
      compared++;
    });
  });
  assert.equal(compared, 72);

  const figures = await page.$$eval('#fit-figures dd[data-full]', (dds) => Object.fromEntries(
    dds.map((dd) => [dd.previousElementSibling.textContent, dd.dataset.full])));
  for (const [label, key] of [['R²', 'r_squared'], ['Adjusted R²', 'adj_r_squared'], ['Residual standard error', 'residual_std_error'],
    ['F statistic', 'f_statistic'], ['p-value of F', 'f_p_value'], ['AIC', 'aic'], ['BIC', 'bic'], ['Log-likelihood', 'log_likelihood']]) {
    assert.ok(relClose(fromFull(figures[label]), cli[key], 1e-9), `${label}: page ${figures[label]}, CLI ${cli[key]}`);
  }
  assert.match(await page.textContent('#fit-figures'), /234 of 240/);
  assert.equal(await page.textContent('#rows-line'), DEMO_ROWS_LINE);

  // The default terms are the profile's own suggestions (the CLI's profile
  // of the same file), identifiers and the response left out.
  const profile = cliProfile(demoCsv);
  const fromProfile = profile.columns.filter((c) => c.offer_as_predictor && c.name !== 'energy_mwh').map((c) => {
    if (c.kind === 'coded_category' || c.kind === 'text_category') return `cat(${c.name})`;
    if (c.kind === 'numeric' && c.suggested_transform) return c.suggested_transform.term;
    return c.name;
  });
  assert.equal(fromProfile.join(', '), DEMO_TERMS, 'the demo terms are the profile\'s suggestions');


  const cautions = await page.$$eval('#cautions-list li', (lis) => lis.map((l) => l.textContent));
  assert.deepEqual(cautions, cli.cautions, 'the cautions are the result\'s own');
  assert.ok(await page.isVisible('#cautions-block'), 'the cautions are visible');

  // The same fit through the test hook is the CLI's JSON, field for field.
  const hooked = await page.evaluate(([response, terms]) => window.plumblineTest.fit(
    document.getElementById('plumbline-demo').textContent, { response, terms }), [DEMO_RESPONSE, DEMO_TERMS]);
  assert.ok(hooked.ok);
  for (const [i, c] of cli.coefficients.entries()) {
    for (const f of COEF_FIELDS) assert.ok(relClose(hooked.ok.coefficients[i][f], c[f], 1e-9), `hook ${c.term} ${f}`);
  }
});

test('Copy table copies tab-separated values with every digit', { timeout: 30000 }, async () => {
  await context.grantPermissions(['clipboard-read', 'clipboard-write']);
  await page.click('#copy-button');
  await page.locator('#copy-status').filter({ hasText: 'Copied' }).waitFor({ timeout: 5000 });
  const expected = await page.evaluate(() => window.plumblineTest.copiedText());
  const clip = await page.evaluate(() => navigator.clipboard.readText());
  assert.equal(clip, expected, 'the clipboard holds the table text');
  // The text is the wasm's export_tsv of the result the page shows (the headings are its own).
  const lines = clip.trimEnd().split('\n').map((l) => l.split('\t'));
  assert.deepEqual(lines[0], ['term', 'estimate', 'standard error', 't', 'p-value', 'interval low', 'interval high', 'standardized', 'aliased']);
  // Every digit the page holds is copied, and they are the CLI's numbers.
  const rows = await coefTableFromPage();
  const cli = cliFit(demoCsv, { response: DEMO_RESPONSE, terms: DEMO_TERMS });
  assert.equal(lines.length, cli.coefficients.length + 1);
  cli.coefficients.forEach((c, i) => {
    assert.equal(lines[i + 1][0], c.term);
    COEF_FIELDS.forEach((f, j) => {
      assert.equal(Number(lines[i + 1][j + 1]), Number(rows[i].cells[j].full), `${c.term} ${f} copied in full`);
      assert.ok(relClose(Number(lines[i + 1][j + 1]), c[f], 1e-9), `${c.term} ${f} copied: ${lines[i + 1][j + 1]}, CLI ${c[f]}`);
    });
  });
});

test('opening the page with #demo loads the demo at once', { timeout: 60000 }, async () => {
  await page.goto(`${pageUrl}#demo`);
  await page.waitForFunction(() => window.plumblineTest && window.plumblineTest.fitsDone() > 0, null, { timeout: 20000 });
  assert.equal(await page.locator('#coef-table tbody tr').count(), 12);
  assert.match(await page.textContent('#data-facts'), /building-energy\.csv/);
  await page.setViewportSize({ width: 1920, height: 1080 });
  await page.evaluate(() => window.scrollTo(0, 0));
  await shot('03-demo-1920x1080');
  await page.setViewportSize({ width: 1366, height: 768 });
  const overflow = await page.evaluate(() => document.documentElement.scrollWidth - window.innerWidth);
  assert.ok(overflow <= 0, `no sideways scrolling of the page at 1366 wide (overflow ${overflow}px)`);
});

test('NIST StRD linear sets: the wasm build agrees with the native CLI', { timeout: 120000 }, async () => {
  await openFresh();
  const sets = readdirSync(nistDir).filter((f) => f.endsWith('.json')).sort();
  assert.equal(sets.length, 11, 'eleven reference sets');
  const table = [];
  const failures = [];
  for (const file of sets) {
    const meta = JSON.parse(readFileSync(join(nistDir, file), 'utf8'));
    const predictors = meta.csv_columns.slice(1);
    let terms;
    let intercept = true;
    if (meta.design === 'columns') terms = predictors.join(', ');
    else if (meta.design === 'polynomial') terms = Array.from({ length: meta.degree }, (_, k) => (k === 0 ? 'x' : `x^${k + 1}`)).join(', ');
    else if (meta.design === 'no_intercept') { terms = predictors.join(', '); intercept = false; }
    else assert.fail(`unknown design ${meta.design}`);
    const csvPath = join(nistDir, meta.csv_file);
    const request = { response: meta.csv_columns[0], terms, intercept };
    const native = cliFit(csvPath, request);
    const wasm = await page.evaluate(([text, req]) => window.plumblineTest.fit(text, req), [readFileSync(csvPath, 'utf8'), request]);
    assert.ok(wasm.ok, `${meta.name}: ${wasm.error}`);
    const w = wasm.ok;
    assert.equal(w.coefficients.length, native.coefficients.length, `${meta.name}: number of coefficients`);
    let minEst = Infinity;
    let minSe = Infinity;
    let identical = true;
    native.coefficients.forEach((c, i) => {
      assert.equal(w.coefficients[i].term, c.term);
      minEst = Math.min(minEst, lre(w.coefficients[i].estimate, c.estimate));
      minSe = Math.min(minSe, lre(w.coefficients[i].std_error, c.std_error));
      identical &&= w.coefficients[i].estimate === c.estimate && w.coefficients[i].std_error === c.std_error;
    });
    const rse = lre(w.residual_std_error, native.residual_std_error);
    const r2 = lre(w.r_squared, native.r_squared);
    identical &&= w.residual_std_error === native.residual_std_error && w.r_squared === native.r_squared;
    const others = differences(w, native);
    table.push({ set: meta.name, p: native.coefficients.length, path: w.solver_path, minEst, minSe, rse, r2, others });
    for (const [what, v] of [['estimates', minEst], ['std errors', minSe], ['residual std error', rse], ['R²', r2]]) {
      if (!(v >= 12)) failures.push(`${meta.name} ${what}: wasm and CLI agree to ${v.toFixed(1)} digits, fewer than 12`);
    }
  }
  const d = (v) => (v === Infinity ? 'same' : v.toFixed(1));
  const pad = (s, n) => String(s).padEnd(n);
  console.log('\n  wasm vs native CLI (LRE, digits; "same" = identical bits)');
  console.log(`  ${pad('set', 10)}${pad('p', 4)}${pad('path', 15)}${pad('estimates', 11)}${pad('std errors', 12)}${pad('resid SE', 10)}${pad('R²', 7)}rest of the result`);
  for (const r of table) {
    console.log(`  ${pad(r.set, 10)}${pad(r.p, 4)}${pad(r.path, 15)}${pad(d(r.minEst), 11)}${pad(d(r.minSe), 12)}${pad(d(r.rse), 10)}${pad(d(r.r2), 7)}${r.others.count === 0 ? 'identical' : `${r.others.count} numbers differ, least LRE ${r.others.least.toFixed(1)} (${r.others.where.join(', ')})`}`);
  }
  console.log('');
  assert.deepEqual(failures, []);
});

test('a header like <img src=x onerror=alert(1)> shows as text and runs nothing', { timeout: 60000 }, async () => {
  await openFresh();
  const evil = '<img src=x onerror=alert(1)>';
  const csv = `"${evil}",y\n1,2\n2,4.5\n3,5\n4,8.5\n`;
  await page.setInputFiles('#file-input', { name: '<b>evil</b>.csv', mimeType: 'text/csv', buffer: Buffer.from(csv) });
  await page.locator('#preview thead th').nth(1).waitFor({ timeout: 10000 });
  assert.equal(await page.textContent('#preview thead th:nth-child(2)'), evil);
  assert.equal(await page.textContent('#columns-table tbody tr:first-child th'), evil, 'the Columns panel shows the name as text');
  assert.match(await page.textContent('#data-facts'), /<b>evil<\/b>\.csv/);
  await page.selectOption('#response-column', 'y');
  await page.fill('#terms', `"${evil}"`);
  await afterFit(() => page.click('#fit-button'));
  await assertCoefRows(2);
  assert.equal(await page.textContent('#coef-table tbody tr:nth-child(2) th'), `"${evil}"`);
  await page.waitForTimeout(300);
  await shot('04-markup-header-as-text');
  assert.equal(await page.locator('img').count(), 0, 'no img element was made');
  assert.equal(await page.locator('#preview b, #data-facts b').count(), 0, 'no b element from the file name');
  assert.deepEqual(dialogs, [], 'no dialog fired');
  assert.deepEqual(foreignRequests(), [], 'nothing was requested');
});

test('a file dropped on the page opens, a workbook too; a broken workbook is refused in plain words', { timeout: 60000 }, async () => {
  await openFresh();
  const drop = (name, b64) => page.evaluate(([n, data]) => {
    const bytes = Uint8Array.from(atob(data), (c) => c.charCodeAt(0));
    const dt = new DataTransfer();
    dt.items.add(new File([bytes], n));
    document.getElementById('drop-zone').dispatchEvent(new DragEvent('drop', { dataTransfer: dt, bubbles: true, cancelable: true }));
  }, [name, Buffer.from(b64).toString('base64')]);
  await drop('dropped.csv', '"floor area",y\n1,2\n2,4.5\n3,5\n4,8.5\n');
  await page.locator('#data-facts').filter({ hasText: 'dropped.csv' }).waitFor({ timeout: 10000 });
  assert.match(await page.textContent('#data-facts'), /4 rows of data, 2 columns/);
  assert.equal(await page.getAttribute('#column-buttons button:first-child', 'title'), 'Add "floor area" to the terms');
  assert.equal(await page.locator('#preview-doubt').count(), 0, 'the old preview note is gone');

  // The preview numbers rows as the file does (header = row 1), as messages do.
  await drop('lines.csv', 'name,y\n"two\nlines",1\n\nz,3\nw,4\n');
  await page.locator('#data-facts').filter({ hasText: 'lines.csv' }).waitFor({ timeout: 10000 });
  assert.deepEqual(await page.$$eval('#preview tbody th', (ths) => ths.map((t) => t.textContent)), ['2', '5', '6']);
  assert.match(await page.textContent('#data-facts'), /3 rows of data, 2 columns/);

  // A workbook dropped opens too, with its sheets to choose from.
  await drop('deliveries.xlsx', readFileSync(join(files, 'deliveries.xlsx')));
  await page.locator('#data-facts').filter({ hasText: 'deliveries.xlsx' }).waitFor({ timeout: 10000 });
  assert.match(await page.textContent('#data-facts'), /30 rows of data, 7 columns/);
  assert.ok(await page.isVisible('#sheet-select'), 'a workbook of two sheets gets a sheet chooser');
  assert.deepEqual(await page.$$eval('#sheet-select option', (os) => os.map((o) => o.value)), ['Deliveries', 'Notes']);
  assert.equal(await page.inputValue('#sheet-select'), 'Deliveries');
  assert.match(await page.textContent('#read-line'), /Sheet Deliveries, header on row 1\./);
  assert.equal(await page.textContent('#preview thead th:first-child'), 'Sheet row');

  // Choosing the other sheet reads it.
  await afterInspect(() => page.selectOption('#sheet-select', 'Notes'));
  await page.locator('#read-line').filter({ hasText: 'Sheet Notes' }).waitFor({ timeout: 10000 });
  assert.match(await page.textContent('#data-facts'), /deliveries\.xlsx.*3 rows of data, 1 column\./);
  assert.equal(await page.locator('#columns-table tbody tr').count(), 1, 'the Columns panel lists the sheet\'s one column');
  await shot('10-sheet-chooser');
  await afterInspect(() => page.selectOption('#sheet-select', 'Deliveries'));
  await page.locator('#data-facts').filter({ hasText: '7 columns' }).waitFor({ timeout: 10000 });

  // Bytes named .xlsx that are no workbook: the reader's words, and the data stay.
  await drop('book.xlsx', 'PK');
  const msg = await visibleText('#data-message');
  const why = (await page.evaluate(() => window.plumblineTest.inspect('PK'))).error;
  assert.match(why, /^Could not read the file: /);
  assert.ok(msg.startsWith('"book.xlsx" could not be opened: '), msg);
  assert.ok(msg.includes(why.replace(/^Could not read the file: /, '')), `the wasm's words (${why})`);
  assert.match(msg, /"deliveries\.xlsx"\) are still loaded/);
  assert.match(await page.textContent('#data-facts'), /deliveries\.xlsx/, 'the dropped data stay');
});

test('an xlsx with a title above the header opens through the file input, header on row 3', { timeout: 60000 }, async () => {
  await openFresh();
  await openFile(join(files, 'deliveries-title.xlsx'));
  assert.match(await page.textContent('#data-facts'), /deliveries-title\.xlsx: 30 rows of data, 7 columns\./);
  assert.equal(await page.inputValue('#header-row'), '3');
  assert.equal(await page.textContent('#read-line'), 'Read as: Sheet Deliveries, header on row 3; 1 row above it skipped.');
  assert.ok(await page.isHidden('#sheet-select'), 'one sheet: no chooser');
  const header = await page.$$eval('#preview thead th', (ths) => ths.map((t) => t.textContent));
  assert.deepEqual(header, ['Sheet row', 'order_id', 'depot', 'distance_km', 'parcels', 'driver_grade', 'delivered', 'minutes']);
  assert.equal(await page.textContent('#preview tbody tr:first-child th'), '4', 'the first data row is sheet row 4');
  assert.equal(await page.locator('#columns-table tbody tr').count(), 7);
  assert.deepEqual(await page.$$eval('#response-column option', (os) => os.slice(1).map((o) => o.value)), header.slice(1));
  await shot('11-xlsx-title-rows');

  // A header row that cannot be: the wasm's words; the data stay as read.
  await afterInspect(async () => {
    await page.fill('#header-row', '99');
    await page.press('#header-row', 'Enter');
  });
  const msg = await visibleText('#data-message');
  assert.match(msg, /Row 99 cannot be the header/);
  assert.match(msg, /The data stay as they were read before/);
  assert.equal(await page.inputValue('#header-row'), '3');
  assert.match(await page.textContent('#data-facts'), /30 rows of data, 7 columns/);
  await shot('12-header-row-refused');

  // Another header row the user chooses is read (row 1, the title, gives one named column).
  await afterInspect(async () => {
    await page.fill('#header-row', '1');
    await page.press('#header-row', 'Enter');
  });
  assert.equal(await page.inputValue('#header-row'), '1');
  assert.match(await page.textContent('#read-line'), /header on row 1\./);
  assert.equal(await page.textContent('#preview thead th:nth-child(2)'), 'Delivery log, spring');
  assert.ok((await page.locator('#read-warnings li').count()) > 0, 'the reader\'s warnings are listed');
  assert.ok(await page.isVisible('#read-warnings-block'));
  assert.equal(await page.getAttribute('#read-warnings-block', 'aria-live'), 'polite');
  await shot('13-header-row-1-warnings');

  // Fits read the file as the page shows it: with the header on row 3 again.
  await afterInspect(async () => {
    await page.fill('#header-row', '3');
    await page.press('#header-row', 'Enter');
  });
  await page.selectOption('#response-column', 'minutes');
  await page.selectOption('#response-transform', '');
  await page.fill('#terms', 'distance_km, cat(depot)');
  await afterFit(() => page.click('#fit-button'));
  await assertCoefRows(5);
  const cli = cliFit(join(files, 'deliveries-title.xlsx'), { response: 'minutes', terms: 'distance_km, cat(depot)' });
  const rows = await coefTableFromPage();
  cli.coefficients.forEach((c, i) => assert.ok(relClose(fromFull(rows[i].cells[0].full), c.estimate, 1e-12), `${c.term}`));
  assert.match(await page.textContent('#rows-line'), /\(sheet rows? /, 'rows left out are counted as sheet rows');
});

test('the demo workbook fits to the same coefficients as the demo CSV', { timeout: 60000 }, async () => {
  await openFresh();
  await openFile(demoXlsx);
  assert.match(await page.textContent('#data-facts'), /building-energy\.xlsx: 240 rows of data, 10 columns\./);
  assert.equal(await page.textContent('#read-line'), 'Read as: Sheet Buildings, header on row 3; 1 row above it skipped.');
  await page.selectOption('#response-column', 'energy_mwh');
  await page.selectOption('#response-transform', 'log');
  await page.click('#suggested-button');
  assert.equal(await page.inputValue('#terms'), DEMO_TERMS, 'the suggested terms are those of the demo CSV');
  await afterFit(() => page.click('#fit-button'));
  await assertCoefRows(12);
  const cli = cliFit(demoCsv, { response: DEMO_RESPONSE, terms: DEMO_TERMS });
  const rows = await coefTableFromPage();
  let worst = Infinity;
  rows.forEach((row, i) => {
    const c = cli.coefficients[i];
    assert.equal(row.term, c.term);
    COEF_FIELDS.forEach((f, j) => {
      const v = fromFull(row.cells[j].full);
      assert.ok(relClose(v, c[f], 1e-12), `${c.term} ${f}: workbook ${v}, CSV ${c[f]}`);
      worst = Math.min(worst, lre(v, c[f]));
    });
  });
  // And against the wasm's own fit of the CSV (the same path, the same arithmetic).
  const wasmCsv = await page.evaluate(([response, terms]) => window.plumblineTest.fit(
    document.getElementById('plumbline-demo').textContent, { response, terms }), [DEMO_RESPONSE, DEMO_TERMS]);
  assert.ok(wasmCsv.ok);
  let worstWasm = Infinity;
  rows.forEach((row, i) => COEF_FIELDS.forEach((f, j) => {
    const v = fromFull(row.cells[j].full);
    assert.ok(relClose(v, wasmCsv.ok.coefficients[i][f], 1e-12), `${row.term} ${f}: workbook ${v}, CSV in the page ${wasmCsv.ok.coefficients[i][f]}`);
    worstWasm = Math.min(worstWasm, lre(v, wasmCsv.ok.coefficients[i][f]));
  }));
  const digits = (v) => (v === Infinity ? 'identical' : `${v.toFixed(1)} digits`);
  console.log(`  demo workbook in the page vs demo CSV: native CLI ${digits(worst)}, in the page ${digits(worstWasm)}`);
  assert.match(await page.textContent('#rows-line'), /1 row with a missing value in mean_outdoor_temp_c \(sheet row 93\)/);
  await shot('14-demo-workbook-fitted');
});

test('a semicolon-separated Latin-1 CSV with decimal commas shows its eight columns', { timeout: 60000 }, async () => {
  await openFresh();
  const path = join(files, 'deliveries-semicolon-latin1.csv');
  await openFile(path);
  assert.match(await page.textContent('#data-facts'), /30 rows of data, 8 columns\./);
  assert.equal(await page.textContent('#read-line'), 'Read as: Text, semicolon-separated, decimal comma, Windows-1252.');
  const header = await page.$$eval('#preview thead th', (ths) => ths.slice(1).map((t) => t.textContent));
  assert.deepEqual(header, ['order_id', 'depot', 'depot_name', 'distance_km', 'Päckchen', 'driver_grade', 'delivered', 'minutes']);
  assert.equal(await page.textContent('#preview tbody tr:nth-child(1) td:nth-child(4)'), 'Zürich-Süd');
  assert.equal(await page.textContent('#preview tbody tr:nth-child(5) td:nth-child(5)'), '6.5', 'decimal comma read as a number');
  assert.equal(await columnRow('Päckchen').locator('select').inputValue(), 'numeric');
  assert.equal(await page.getAttribute('#column-buttons button:nth-child(5)', 'title'), 'Add Päckchen to the terms');
  // The hook's inspect is the page's.
  const hooked = await page.evaluate((b64) => window.plumblineTest.inspect(Uint8Array.from(atob(b64), (c) => c.charCodeAt(0)), {}),
    readFileSync(path).toString('base64'));
  assert.deepEqual(hooked.ok.preview.header, header);
  assert.equal(hooked.ok.load.encoding, 'Windows-1252');
  await page.selectOption('#response-column', 'minutes');
  await page.fill('#terms', 'distance_km, Päckchen');
  await afterFit(() => page.click('#fit-button'));
  await assertCoefRows(3);
  await shot('15-semicolon-latin1');
});

test('pasted cells load, and fits read them as pasted cells', { timeout: 60000 }, async () => {
  await openFresh();
  const text = readFileSync(join(files, 'deliveries-paste.txt'), 'utf8');
  await page.fill('#paste-text', text);
  await page.click('#paste-button');
  await page.locator('#data-facts').filter({ hasText: 'Pasted cells' }).waitFor({ timeout: 10000 });
  assert.match(await page.textContent('#data-facts'), /Pasted cells: 30 rows of data, 7 columns\./);
  assert.equal(await page.textContent('#read-line'), 'Read as: Pasted cells, tab-separated, decimal comma.');
  assert.equal(await page.textContent('#preview thead th:first-child'), 'Pasted row');
  assert.equal(await page.locator('#preview tbody tr').count(), 10);
  assert.equal(await page.textContent('#preview tbody tr:nth-child(1) td:nth-child(4)'), '23.4', 'decimal comma read as a number');
  await page.selectOption('#response-column', 'minutes');
  await page.fill('#terms', 'distance_km, parcels');
  await afterFit(() => page.click('#fit-button'));
  await assertCoefRows(3);
  const cli = cliFit('-', { response: 'minutes', terms: 'distance_km, parcels' }, text);
  const rows = await coefTableFromPage();
  cli.coefficients.forEach((c, i) => assert.ok(relClose(fromFull(rows[i].cells[0].full), c.estimate, 1e-12), `${c.term}`));
  assert.ok(await page.textContent('#rows-line').then((t) => t.startsWith(`${cli.n} of 30 rows used.`)));
  await shot('16-pasted-cells');

  // An empty box: a plain message, and the pasted data stay.
  await page.fill('#paste-text', '  ');
  await page.click('#paste-button');
  assert.match(await visibleText('#data-message'), /no pasted cells to use/);
  assert.match(await page.textContent('#data-facts'), /Pasted cells: 30 rows/);
});

test('the Columns panel: kinds, reasons, Add, Add as is, Undo and a kind set by the user', { timeout: 60000 }, async () => {
  await openFresh();
  await afterFit(() => page.click('#demo-button'));
  const zone = columnRow('climate_zone');
  assert.equal(await zone.locator('select').inputValue(), 'coded_category');
  assert.equal(await zone.locator('select option:checked').textContent(), 'coded category');
  assert.match(await zone.locator('td.reason').textContent(), /twice/);
  assert.equal(await zone.locator('td.suggest').textContent(), 'cat(climate_zone)');
  for (const id of ['building_id', 'site_code']) {
    assert.equal(await columnRow(id).locator('td.actions').textContent(), 'left out: labels rows');
    assert.equal(await columnRow(id).locator('button').count(), 0, `${id} has no Add button`);
  }
  assert.equal(await columnRow('floor_area_m2').locator('td.num').nth(2).textContent(), '14.7', 'the skewness, rounded');
  assert.equal(await columnRow('building_age').locator('button').count(), 1, 'no Add as is without a suggested transform');
  assert.equal(await columnRow('energy_mwh').locator('td.actions').textContent(), 'the response', 'the response is not offered as a term');
  assert.equal(await columnRow('energy_mwh').locator('td.suggest').textContent(), 'log(energy_mwh)');
  assert.equal(await page.inputValue('#terms'), DEMO_TERMS);

  // Add, and Undo.
  assert.ok(await page.isDisabled('#undo-button'), 'nothing to undo yet');
  await page.fill('#terms', 'log(floor_area_m2)');
  await zone.locator('button.add').click();
  assert.equal(await page.inputValue('#terms'), 'log(floor_area_m2), cat(climate_zone)');
  assert.match(await page.textContent('#columns-status'), /Added cat\(climate_zone\)/);
  assert.ok(await page.isVisible('#stale-note'), 'the result is marked as out of date');
  await columnRow('occupants').locator('button.add-plain').click();
  assert.equal(await page.inputValue('#terms'), 'log(floor_area_m2), cat(climate_zone), occupants');
  await columnRow('hvac_type').locator('button.add').click();
  assert.equal(await page.inputValue('#terms'), 'log(floor_area_m2), cat(climate_zone), occupants, cat(hvac_type)');
  await zone.locator('button.add').click();
  assert.match(await page.textContent('#columns-status'), /already in the terms/);
  assert.equal(await page.inputValue('#terms'), 'log(floor_area_m2), cat(climate_zone), occupants, cat(hvac_type)', 'no term twice');
  await page.click('#undo-button');
  await page.click('#undo-button');
  assert.equal(await page.inputValue('#terms'), 'log(floor_area_m2), cat(climate_zone)');
  await page.click('#undo-button');
  assert.equal(await page.inputValue('#terms'), 'log(floor_area_m2)', 'Undo removes cat(climate_zone)');
  assert.ok(await page.isDisabled('#undo-button'), 'everything undone');
  await page.screenshot({ path: join(shots, '17-columns-panel-1366x768.png'), fullPage: false, clip: await page.locator('#columns').boundingBox() });

  // Changing a kind inspects again and says who set it.
  await afterInspect(() => zone.locator('select').selectOption('numeric'));
  await zone.locator('.by-you').waitFor({ timeout: 10000 });
  assert.equal(await zone.locator('.by-you').textContent(), 'set by you');
  assert.equal(await zone.locator('select').inputValue(), 'numeric');
  assert.equal(await zone.locator('td.reason').textContent(), 'Set by you to numeric.');
  assert.equal(await page.evaluate(() => document.activeElement && document.activeElement.dataset.column), 'climate_zone', 'focus stays on the kind');
  assert.ok(await columnRow('building_id').locator('.by-you').count() === 0, 'other columns are as found');
  await zone.locator('button.add').click();
  assert.equal(await page.inputValue('#terms'), 'log(floor_area_m2), climate_zone', 'as numeric it is added as it is');
  await page.click('#undo-button');
  // An identifier the user calls a category can be added.
  await afterInspect(() => columnRow('site_code').locator('select').selectOption('coded_category'));
  await columnRow('site_code').locator('.by-you').waitFor({ timeout: 10000 });
  assert.equal(await columnRow('site_code').locator('button.add').getAttribute('data-term'), 'cat(site_code)');
  await shot('18-columns-kinds-set');
  // Back to what was found: no longer marked.
  await afterInspect(() => zone.locator('select').selectOption('coded_category'));
  await page.waitForFunction(() => !document.querySelector('#columns-table tr[data-column="climate_zone"] .by-you'));
  assert.match(await zone.locator('td.reason').textContent(), /twice/);
  assert.equal(await columnRow('site_code').locator('.by-you').count(), 1, 'the other kind set stays');
  // The data and the fit are untouched by kinds.
  assert.match(await page.textContent('#data-facts'), /240 rows of data/);
  await page.click('#suggested-button');
  assert.equal(await page.inputValue('#terms'), DEMO_TERMS.replace('cat(climate_zone)', 'cat(site_code), cat(climate_zone)'));
  await page.click('#undo-button');
  assert.equal(await page.inputValue('#terms'), 'log(floor_area_m2)');
});

test('a bad term shows the plain message and the table stays loaded', { timeout: 60000 }, async () => {
  await openFresh();
  await afterFit(() => page.click('#demo-button'));
  await assertCoefRows(12);
  await page.fill('#terms', 'log(floor_area_m2), nosuchcol');
  await afterFit(() => page.click('#fit-button'));
  const msg = await visibleText('#model-message');
  assert.match(msg, /There is no column called "nosuchcol"/);
  assert.equal(await page.getAttribute('#model-message', 'role'), 'alert');
  assert.equal(await page.locator('#preview tbody tr').count(), 10, 'the preview is still there');
  assert.match(await page.textContent('#data-facts'), /240 rows of data/);
  assert.equal(await page.inputValue('#terms'), 'log(floor_area_m2), nosuchcol', 'the terms typed are kept');
  assert.equal(await page.inputValue('#response-column'), 'energy_mwh');
  await shot('05-bad-term');

  // A syntax slip is reported in plain words too.
  await page.fill('#terms', 'log(floor_area_m2');
  await afterFit(() => page.press('#terms', 'Enter'));
  assert.match(await visibleText('#model-message'), /Could not read/);

  // Mending the term and fitting again works on the data still loaded.
  await page.fill('#terms', DEMO_TERMS);
  await afterFit(() => page.click('#fit-button'));
  await assertCoefRows(12);
  assert.ok(await page.isHidden('#model-message'), 'the message is cleared by a good fit');
});

test('a corrupt file shows a message and the data already loaded stay', { timeout: 60000 }, async () => {
  // Still on the demo from the test before.
  assert.match(await page.textContent('#data-facts'), /building-energy\.csv/);
  const junk = Buffer.concat([Buffer.from([0xff, 0xfe, 0x00, 0xc3, 0x28]), randomBytes(2048)]);
  await page.setInputFiles('#file-input', { name: 'broken.csv', mimeType: 'text/csv', buffer: junk });
  const msg = await visibleText('#data-message');
  const why = (await page.evaluate((b64) => {
    const bin = atob(b64);
    const bytes = Uint8Array.from(bin, (c) => c.charCodeAt(0));
    return window.plumblineTest.fitBytes(bytes, { response: '' });
  }, junk.toString('base64'))).error;
  assert.match(why, /^Could not read the file: /, 'the wasm refuses the bytes');
  assert.match(msg, /"broken\.csv" could not be opened: /);
  assert.ok(msg.includes(why.replace(/^Could not read the file: /, '')), `the message holds the wasm's words (${why})`);
  assert.match(msg, /are still loaded/);
  assert.match(await page.textContent('#data-facts'), /building-energy\.csv .*240 rows of data, 10 columns/);
  assert.equal(await page.locator('#preview tbody tr').count(), 10);
  assert.equal(await page.inputValue('#response-column'), 'energy_mwh');
  await shot('06-corrupt-file');

  // A ragged file is refused with the reader's words as well.
  const ragged = Buffer.from('a,b\n1,2\n3\n');
  const raggedWhy = (await page.evaluate((t) => window.plumblineTest.fit(t, { response: '' }), ragged.toString())).error;
  assert.match(raggedWhy, /^Could not read the file: /);
  await page.setInputFiles('#file-input', { name: 'ragged.csv', mimeType: 'text/csv', buffer: ragged });
  await page.locator('#data-message').filter({ hasText: 'ragged.csv' }).waitFor({ timeout: 10000 });
  assert.ok((await page.textContent('#data-message')).includes(raggedWhy.replace(/^Could not read the file: /, '')), 'the wasm reader\'s own words');

  // The data still fit.
  await afterFit(() => page.click('#fit-button'));
  await assertCoefRows(12);
});

test('when the worker dies, the page says so, starts a fresh one and keeps the data', { timeout: 60000 }, async () => {
  await page.evaluate(() => window.plumblineTest.crashWorker());
  const msg = await visibleText('#model-message');
  assert.match(msg, /stopped unexpectedly/);
  assert.match(msg, /fresh calculation worker/);
  await shot('07-worker-restarted');
  assert.match(await page.textContent('#data-facts'), /240 rows of data/);
  await afterFit(() => page.click('#fit-button'));
  await assertCoefRows(12);
  assert.ok(await page.isHidden('#model-message'), 'the message is cleared by the good fit');
  const r = await page.evaluate(() => window.plumblineTest.fit('y,x\n1,1\n2,3\n4,4\n', { response: 'y', terms: 'x' }));
  assert.ok(r.ok, 'the fresh worker fits');
});

test('when the worker reports a panic, the page shows it and starts a fresh worker', { timeout: 60000 }, async () => {
  const e = await page.evaluate(() => window.plumblineTest.pretendPanic());
  assert.equal(e && e.kind, 'panic', 'the request is rejected as a panic');
  const msg = await visibleText('#model-message');
  assert.match(msg, /internal error, which is a bug/);
  assert.match(msg, /fresh calculation worker/);
  await afterFit(() => page.click('#fit-button'));
  await assertCoefRows(12);
  assert.ok(await page.isHidden('#model-message'));
});

test('a real panic inside the wasm becomes a message; a fresh worker takes over with the data and choices kept', { timeout: 60000 }, async () => {
  await openFresh();
  await afterFit(() => page.click('#demo-button'));
  await page.fill('#terms', 'log(floor_area_m2), cat(hvac_type)');
  await afterFit(() => page.click('#fit-button'));
  await assertCoefRows(4);
  const workersBefore = workers.length;
  const e = await page.evaluate(() => window.plumblineTest.realPanic());
  assert.equal(e && e.kind, 'panic', 'the request is rejected as a panic');
  assert.match(e.message, /^plumbline stopped on an internal error, which is a bug: .*a panic on purpose, from the test hook panic_for_test/s,
    'the message is the panic hook\'s (last_panic), not a bare trap');
  const msg = await visibleText('#model-message');
  assert.ok(msg.startsWith(e.message), msg);
  assert.match(msg, /A fresh calculation worker has been started\. Your data and choices are still here/);
  for (let i = 0; i < 50 && workers.length === workersBefore; i++) await page.waitForTimeout(100);
  assert.equal(workers.length, workersBefore + 1, 'a fresh worker was started');
  assert.match(await page.textContent('#data-facts'), /240 rows of data/);
  assert.equal(await page.inputValue('#response-column'), 'energy_mwh');
  assert.equal(await page.inputValue('#response-transform'), 'log');
  assert.equal(await page.inputValue('#terms'), 'log(floor_area_m2), cat(hvac_type)');
  await assertCoefRows(4);
  await afterFit(() => page.click('#fit-button'));
  assert.ok(await page.isHidden('#model-message'), 'the message is cleared by the good fit');
  assert.deepEqual(pageErrors, [], 'no uncaught script error');
});

test('a file larger than the page reads is refused before it is read, and the tab goes on', { timeout: 60000 }, async () => {
  await openFresh();
  await afterFit(() => page.click('#demo-button'));
  const limit = await page.evaluate(() => window.plumblineTest.maxFileBytes());
  assert.equal(limit, 256 * 1024 * 1024, 'the limit the README states');
  // A sparse file on disk: 256 MiB and one byte, through the real file input.
  const huge = join(shots, 'too-big.csv');
  writeFileSync(huge, '');
  truncateSync(huge, limit + 1);
  await page.setInputFiles('#file-input', huge);
  const msg = await visibleText('#data-message');
  assert.equal(msg, '"too-big.csv" is 268,435,457 bytes, more than the 256 MiB (268,435,456 bytes) this page reads, so it was not opened. '
    + 'Save the columns you need, or fewer rows, to a smaller file and open that; the command-line tool reads larger files. '
    + 'The data already open ("building-energy.csv (invented demo data)") are still loaded.');
  truncateSync(huge, 3 * limit);
  await page.setInputFiles('#file-input', huge);
  await page.locator('#data-message').filter({ hasText: '768.0 MiB, more than the 256 MiB this page reads' }).waitFor({ timeout: 5000 });
  // The same check for a file of new cases.
  await page.setInputFiles('#cases-file', huge);
  await page.locator('#predict-message').filter({ hasText: '"too-big.csv" is 768.0 MiB, more than the 256 MiB' }).waitFor({ timeout: 5000 });
  truncateSync(huge, 0);
  // The tab lives: the data, the choices and the result are there, and it fits.
  assert.match(await page.textContent('#data-facts'), /building-energy\.csv .*240 rows of data/);
  assert.equal(await page.inputValue('#terms'), DEMO_TERMS);
  await assertCoefRows(12);
  await afterFit(() => page.click('#fit-button'));
  await assertCoefRows(12);
  assert.deepEqual(pageErrors, []);
});

/** A CSV of about 40 MB: 400,000 rows of 10 numeric columns, seeded. */
function largeCsv() {
  const rnd = seeded(20261202);
  const names = ['y', ...Array.from({ length: 9 }, (_, i) => `x${i + 1}`)];
  const lines = [names.join(',')];
  for (let r = 0; r < 400000; r++) {
    const cells = [];
    for (let j = 0; j < 10; j++) cells.push((rnd() * 10000).toFixed(5));
    lines.push(cells.join(','));
  }
  return `${lines.join('\n')}\n`;
}

test('a large file shows how much is read, Cancel ends the load and keeps what was open; a load allowed to finish opens it', { timeout: 300000 }, async () => {
  await openFresh();
  await demoWithChoices();
  const coefBefore = await coefTableFromPage();
  assert.ok(await page.isHidden('#load-block'), 'no bar while nothing loads');
  const big = join(shots, 'large-40mb.csv');
  writeFileSync(big, largeCsv());
  const size = statSync(big).size;
  assert.ok(size > 38e6 && size < 48e6, `about 40 MB (${size} bytes)`);
  try {
    // Every value the bar takes, from the page itself.
    await page.evaluate(() => {
      window.loadSeen = [];
      window.loadTexts = [];
      const bar = document.getElementById('load-progress');
      new MutationObserver(() => window.loadSeen.push(Number(bar.getAttribute('aria-valuenow'))))
        .observe(bar, { attributes: true, attributeFilter: ['aria-valuenow'] });
      new MutationObserver(() => window.loadTexts.push(bar.getAttribute('aria-valuetext')))
        .observe(bar, { attributes: true, attributeFilter: ['aria-valuetext'] });
    });
    const workersBefore = workers.length;
    const before = await page.evaluate(() => window.plumblineTest.inspectsDone());
    // A path, not a buffer: the browser reads the file from the disk as a user's would.
    await page.setInputFiles('#file-input', big);
    await page.locator('#load-block').waitFor({ state: 'visible', timeout: 60000 });
    assert.equal(await page.getAttribute('#load-progress', 'role'), 'progressbar');
    await page.waitForFunction(() => Number(document.getElementById('load-progress').getAttribute('aria-valuenow')) > 0, null, { timeout: 60000 });
    const first = Number(await page.getAttribute('#load-progress', 'aria-valuenow'));
    await page.waitForFunction((n) => Number(document.getElementById('load-progress').getAttribute('aria-valuenow')) > n, first, { timeout: 60000 });
    assert.ok(await page.isVisible('#load-cancel'), 'Cancel is offered while it loads');
    assert.match(await page.textContent('#load-status'), /^(?:Reading "large-40mb\.csv"…|Read "large-40mb\.csv"; looking at its columns…)$/);
    assert.match(await page.textContent('#load-percent'), /^\d+%$/);
    assert.match(await page.getAttribute('#load-progress', 'aria-valuetext'), /^(?:\d+% of "large-40mb\.csv" read|\d+%: "large-40mb\.csv" read, looking at its columns)$/);
    await page.locator('#data').screenshot({ path: join(shots, '22b-loading-a-large-file.png') });
    await page.click('#load-cancel');
    await page.waitForFunction((n) => window.plumblineTest.inspectsDone() > n, before, { timeout: 20000 });
    const msg = await visibleText('#data-message');
    assert.equal(msg, 'Loading "large-40mb.csv" was cancelled, so it was not opened. The data already open ("building-energy.csv (invented demo data)") are still loaded.');
    assert.ok(await page.isHidden('#load-block'), 'the bar goes');
    const seen = await page.evaluate(() => window.loadSeen);
    const between = seen.filter((v) => v > 0 && v < 100);
    assert.ok(new Set(between).size >= 2, `the bar moved (${seen.join(', ')})`);
    assert.ok(seen.every((v, i) => i === 0 || v >= seen[i - 1]), `the bar never goes back (${seen.join(', ')})`);
    for (let i = 0; i < 50 && workers.length === workersBefore; i++) await page.waitForTimeout(100);
    assert.equal(workers.length, workersBefore + 1, 'the worker was ended and a fresh one started');
    // What was open before stays: the data, the choices and the result.
    assert.match(await page.textContent('#data-facts'), /building-energy\.csv .*240 rows of data, 10 columns/);
    assert.equal(await page.locator('#preview tbody tr').count(), 10);
    assert.equal(await page.inputValue('#response-column'), 'energy_mwh');
    assert.equal(await page.inputValue('#response-transform'), 'sqrt');
    assert.equal(await page.inputValue('#terms'), 'log(floor_area_m2), cat(climate_zone)');
    assert.equal(await page.inputValue('#level'), '90');
    assert.deepEqual(await coefTableFromPage(), coefBefore, 'the result stays');
    await afterFit(() => page.click('#fit-button'));
    assert.deepEqual(await coefTableFromPage(), coefBefore, 'the fresh worker fits the data kept');
    assert.ok(await page.isHidden('#model-message'));

    // The same file, allowed to finish, opens.
    await page.evaluate(() => { window.loadSeen = []; window.loadTexts = []; });
    await page.setInputFiles('#file-input', big);
    await page.locator('#data-facts').filter({ hasText: 'large-40mb.csv' }).waitFor({ timeout: 240000 });
    assert.equal(await page.textContent('#data-facts'), 'large-40mb.csv: 400000 rows of data, 10 columns.');
    assert.ok(await page.isHidden('#data-message'), 'no problem shown');
    assert.ok(await page.isHidden('#load-block'), 'the bar goes when the data are open');
    assert.deepEqual(await page.$$eval('#preview thead th', (ths) => ths.slice(1).map((t) => t.textContent)), ['y', 'x1', 'x2', 'x3', 'x4', 'x5', 'x6', 'x7', 'x8', 'x9']);
    assert.equal(await page.locator('#columns-table tbody tr').count(), 10);
    const again = await page.evaluate(() => window.loadSeen);
    assert.ok(again.some((v) => v > 0 && v < 100), `the bar moved on the way (${again.join(', ')})`);
    // Reading first, then the columns: the bar says which, and never goes back to reading.
    const texts = await page.evaluate(() => window.loadTexts);
    const phase = (t) => (/looking at its columns$/.test(t) ? 1 : 0);
    assert.ok(texts.some((t) => phase(t) === 0) && texts.some((t) => phase(t) === 1), `both phases shown (${texts.join(' | ')})`);
    assert.ok(texts.every((t, i) => i === 0 || phase(t) >= phase(texts[i - 1])), `reading, then the columns (${texts.join(' | ')})`);
    assert.deepEqual(pageErrors, []);
  } finally {
    unlinkSync(big);
  }
});

test('the bad-input corpus through the file input: a plain message, and the data and choices already there stay', { timeout: 120000 }, async () => {
  const badDir = join(root, 'tests', 'data', 'bad');
  const expected = JSON.parse(readFileSync(join(badDir, 'expected.json'), 'utf8'));
  const names = Object.keys(expected).sort();
  assert.ok(names.length >= 11, `the corpus lists its files (${names.length})`);
  const noJargon = /panic|undefined|NaN|null|\[object|Error:|at line \d+ column|unwrap|RuntimeError|stack/;
  await openFresh();
  const choicesKept = async (name) => {
    assert.match(await page.textContent('#data-facts'), /building-energy\.csv .*240 rows of data, 10 columns/, `${name}: the data stay`);
    assert.equal(await page.locator('#preview tbody tr').count(), 10, `${name}: the preview stays`);
    assert.equal(await page.inputValue('#response-column'), 'energy_mwh', `${name}: the response stays`);
    assert.equal(await page.inputValue('#response-transform'), 'sqrt', `${name}: its scale stays`);
    assert.equal(await page.inputValue('#terms'), 'log(floor_area_m2), cat(climate_zone)', `${name}: the terms stay`);
    assert.equal(await page.inputValue('#level'), '90', `${name}: the level stays`);
    await assertCoefRows(6);
  };
  await demoWithChoices();
  const seen = [];
  for (const name of names) {
    const want = expected[name];
    const bytes = readFileSync(join(badDir, name));
    const cli = spawnSync(cliPath, ['profile', join(badDir, name), '--json'], { encoding: 'utf8' });
    if (want.outcome === 'refuse') {
      assert.equal(cli.status, 1, `${name}: the CLI refuses it with exit code 1`);
      const before = await page.evaluate(() => window.plumblineTest.inspectsDone());
      await page.setInputFiles('#file-input', { name, mimeType: 'application/octet-stream', buffer: bytes });
      await page.waitForFunction((n) => window.plumblineTest.inspectsDone() > n, before, { timeout: 15000 });
      const msg = await visibleText('#data-message');
      assert.ok(msg.startsWith(`"${name}" could not be opened: `), `${name}: ${msg}`);
      assert.ok(msg.endsWith('The data already open ("building-energy.csv (invented demo data)") are still loaded.'), `${name}: ${msg}`);
      assert.doesNotMatch(msg, noJargon, `${name}: plain words (${msg})`);
      // The CLI's own words for the same bytes (its message names the path).
      const cliWords = cli.stderr.trim().replace(/^Could not read "[^"]*":\s*/, '');
      assert.ok(msg.includes(cliWords), `${name}: the page says what the CLI says (${cliWords})`);
      if (want.line > 1) assert.match(msg, new RegExp(`\\b(?:[Ll]ine|row) ${want.line}\\b`), `${name}: the line is named`);
      await choicesKept(name);
      seen.push(`${name}: refused`);
    } else {
      assert.equal(cli.status, 0, `${name}: the CLI reads it`);
      await page.setInputFiles('#file-input', { name, mimeType: 'text/csv', buffer: bytes });
      await page.locator('#data-facts').filter({ hasText: name }).waitFor({ timeout: 15000 });
      assert.ok(await page.isHidden('#data-message'), `${name}: no problem shown`);
      const facts = await page.textContent('#data-facts');
      assert.ok(facts.includes(`${plural(want.rows, 'row')} of data, ${plural(want.columns.length, 'column')}.`), `${name}: ${facts}`);
      assert.deepEqual(await page.$$eval('#preview thead th', (ths) => ths.slice(1).map((t) => t.textContent)), want.columns, `${name}: its columns`);
      const warnings = await page.$$eval('#read-warnings li', (lis) => lis.map((l) => l.textContent));
      const cliWarnings = JSON.parse(cli.stdout).load.warnings;
      assert.deepEqual(warnings, cliWarnings, `${name}: the reader's warnings, in its words`);
      assert.equal(warnings.length > 0, want.warnings.length > 0, `${name}: warned when the corpus expects a warning`);
      assert.equal(await page.isVisible('#read-warnings-block'), warnings.length > 0);
      for (const w of warnings) assert.doesNotMatch(w, noJargon, `${name}: plain words (${w})`);
      for (const [column, kind] of Object.entries(want.kinds || {})) {
        assert.equal(await columnRow(column).locator('select').inputValue(), kind, `${name}: ${column} is ${kind}`);
      }
      seen.push(`${name}: loaded, ${plural(warnings.length, 'warning')}`);
      await demoWithChoices();
    }
  }
  console.log(`  bad-input corpus through the page: ${seen.join('; ')}`);
  await shot('28-bad-input-kept');
});

test('the page works from the keyboard, and every control has a label', { timeout: 60000 }, async () => {
  await openFresh();
  const unlabelled = await page.$$eval('input, select, textarea, button', (els) => els
    .filter((e) => !(e.labels && e.labels.length) && !e.getAttribute('aria-label') && !e.getAttribute('aria-labelledby') && !e.textContent.trim())
    .map((e) => e.id || e.outerHTML.slice(0, 60)));
  assert.deepEqual(unlabelled, [], 'controls without a label');

  await page.evaluate(() => document.activeElement && document.activeElement.blur());
  let reached = false;
  for (let i = 0; i < 12 && !reached; i++) {
    await page.keyboard.press('Tab');
    reached = await page.evaluate(() => document.activeElement && document.activeElement.id === 'demo-button');
  }
  assert.ok(reached, 'Tab reaches the demo button');
  await afterFit(() => page.keyboard.press('Enter'));
  await assertCoefRows(12);

  await page.focus('#terms');
  await page.keyboard.press('ControlOrMeta+a');
  await page.keyboard.type('log(floor_area_m2), retrofit');
  await afterFit(() => page.keyboard.press('Enter'));
  await assertCoefRows(3); // Enter in the terms fits the new model
  await page.keyboard.press('Tab');
  const focused = await page.evaluate(() => document.activeElement.className);
  assert.match(focused, /chip/, 'the column buttons are in the tab order');
  await page.keyboard.press('Enter');
  assert.match(await page.inputValue('#terms'), /retrofit, \w+$/, 'a column button adds its name to the terms');
  await shot('08-keyboard');
});

test('HC3 and a changed level come through from the wasm', { timeout: 60000 }, async () => {
  await page.fill('#terms', DEMO_TERMS);
  await page.check('#hc3');
  await page.fill('#level', '90');
  await afterFit(() => page.click('#fit-button'));
  await assertCoefRows(12);
  const cli = cliFit(demoCsv, { response: DEMO_RESPONSE, terms: DEMO_TERMS, level: 0.9, hc3: true });
  const hc3 = await page.$$eval('#hc3-table tbody tr', (rows) => rows.map((tr) => [...tr.querySelectorAll('td.num')].map((td) => td.dataset.full)));
  cli.hc3.forEach((c, i) => {
    ['std_error', 't', 'p_value', 'ci_low', 'ci_high'].forEach((f, j) => assert.ok(relClose(fromFull(hc3[i][j]), c[f], 1e-9), `HC3 ${c.term} ${f}`));
  });
  const rows = await coefTableFromPage();
  cli.coefficients.forEach((c, i) => assert.ok(relClose(fromFull(rows[i].cells[4].full), c.ci_low, 1e-9), `90% low of ${c.term}`));
  assert.match(await page.textContent('#coef-table thead'), /Low \(90%\)/);
  await shot('09-hc3-level-90');
});

/** A seeded generator (mulberry32), so that the big table is the same each run. */
function seeded(seed) {
  let a = seed >>> 0;
  return () => {
    a = (a + 0x6D2B79F5) >>> 0;
    let t = a;
    t = Math.imul(t ^ (t >>> 15), t | 1);
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61);
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
  };
}

/** A CSV of a response and 26 numeric columns of noise, 400 rows. */
function bigNoiseCsv() {
  const rnd = seeded(20240611);
  const names = Array.from({ length: 26 }, (_, i) => `x${String(i + 1).padStart(2, '0')}`);
  const lines = [['y', ...names].join(',')];
  for (let r = 0; r < 400; r++) lines.push(Array.from({ length: 27 }, () => rnd().toFixed(5)).join(','));
  return `${lines.join('\n')}\n`;
}

function cliSelect(file, { response, candidates, by, stability }) {
  const args = ['select', file, '--response', response, '--candidates', candidates, '--json'];
  if (by) args.push('--by', by);
  if (stability) args.push('--stability', String(stability));
  return JSON.parse(execFileSync(cliPath, args, { encoding: 'utf8', maxBuffer: 64 << 20 }));
}

function cliCheck(file, { response, terms }) {
  return JSON.parse(execFileSync(cliPath, ['check', file, '--response', response, '--terms', terms, '--json'], { encoding: 'utf8', maxBuffer: 64 << 20 }));
}

/** Runs a page action that starts a search and waits until the page has its end. */
async function afterSearch(action, timeout = 60000) {
  const before = await page.evaluate(() => window.plumblineTest.searchesDone());
  await action();
  await page.waitForFunction((n) => window.plumblineTest.searchesDone() > n, before, { timeout });
}

/** Waits until the checks of the fit shown have all their figures drawn. */
async function checksDrawn(before) {
  await page.waitForFunction((n) => window.plumblineTest.figuresDrawn() > n, before, { timeout: 30000 });
}

test('a best-subset search on the demo runs through the page: progress to the end, the sets compared, one recommended', { timeout: 90000 }, async () => {
  await openFresh();
  await afterFit(() => page.click('#demo-button'));
  assert.equal(await page.inputValue('#candidates'), DEMO_TERMS, 'the candidates start as the suggested terms');
  assert.equal(await page.inputValue('#choose-by'), 'bic', 'BIC is the default');
  // Every value the progress bar takes, from the page itself.
  await page.evaluate(() => {
    window.progressSeen = [];
    const bar = document.getElementById('search-progress');
    new MutationObserver(() => window.progressSeen.push(Number(bar.getAttribute('aria-valuenow'))))
      .observe(bar, { attributes: true, attributeFilter: ['aria-valuenow'] });
  });
  await afterSearch(() => page.click('#search-button'));
  assert.ok(await page.isHidden('#choose-message'), await page.textContent('#choose-message'));
  assert.equal(await page.getAttribute('#search-progress', 'role'), 'progressbar');
  assert.equal(await page.getAttribute('#search-progress', 'aria-valuenow'), '100', 'the progress bar reaches its end');
  const seen = await page.evaluate(() => window.progressSeen);
  assert.ok(seen.length >= 2 && seen[0] === 0 && seen.at(-1) === 100, `progress from 0 to 100 (${seen.join(', ')})`);
  assert.ok(seen.every((v, i) => i === 0 || v >= seen[i - 1] || v === 0), `progress never goes back (${seen.join(', ')})`);

  const cli = cliSelect(demoCsv, { response: DEMO_RESPONSE, candidates: DEMO_TERMS });
  const rows = page.locator('#comparison-table tbody tr');
  const count = await rows.count();
  assert.ok(count >= 5, `at least 5 sets compared (${count})`);
  assert.equal(count, cli.comparison.length, 'the sets of the native CLI');
  assert.equal(await page.locator('#comparison-table tbody tr.recommended').count(), 1, 'one recommended row');
  const rec = page.locator('#comparison-table tbody tr.recommended');
  assert.match(await rec.locator('th').textContent(), /^Recommended /, 'marked in words, not colour alone');
  assert.ok((await rec.locator('th').textContent()).endsWith(cli.recommended.terms.join(', ')), 'the CLI\'s recommendation');
  assert.equal(await page.textContent('#recommend-reason'), cli.recommended.reason);
  const heads = await page.$$eval('#comparison-table thead th', (ths) => ths.map((t) => t.firstChild.textContent));
  assert.deepEqual(heads, ['Terms', 'k', 'R²', 'Adjusted R²', 'AIC', 'BIC', 'Cp', 'CV RMSE', 'Stability', 'Best by', 'Model']);
  // The numbers are the CLI's (full values in data-full).
  const bic = await page.$$eval('#comparison-table tbody tr', (trs) => trs.map((tr) => Number(tr.querySelectorAll('td.num')[4].dataset.full)));
  cli.comparison.forEach((c, i) => assert.ok(relClose(bic[i], c.bic, 1e-9), `BIC of set ${i + 1}: page ${bic[i]}, CLI ${c.bic}`));
  assert.ok((await page.locator('#route-steps li').count()) >= 1, 'the p-value route is shown');
  assert.deepEqual(await page.$$eval('#choose-cautions li', (lis) => lis.map((l) => l.textContent)), cli.cautions);
  assert.ok(await page.isVisible('#choose-cautions'), 'the cautions are visible next to the results');
  await page.locator('#choose').screenshot({ path: join(shots, '19-choose-the-terms.png') });

  // How stable: bars with their percentages.
  await page.check('#stability');
  await page.fill('#resamples', '50');
  await afterSearch(() => page.click('#search-button'));
  const cliStable = cliSelect(demoCsv, { response: DEMO_RESPONSE, candidates: DEMO_TERMS, stability: 50 });
  const bars = await page.$$eval('#stability-bars li', (lis) => lis.map((l) => [l.querySelector('.bar-term').textContent, l.querySelector('.bar-pct').textContent]));
  assert.deepEqual(bars, cliStable.stability.terms.map((t) => [t.term, `${Math.round(t.share * 100)}%`]));
  assert.match(await page.textContent('#stability-intro'), /50 resamples/);
  await page.locator('#choose').screenshot({ path: join(shots, '20-choose-the-terms-stability.png') });

  // Use this model: the set's terms go into the model's terms (undoable) and are fitted.
  const three = cli.comparison.find((c) => c.k === 3);
  const row = page.locator('#comparison-table tbody tr').filter({ has: page.locator('td.num', { hasText: /^3$/ }) }).first();
  await afterFit(() => row.locator('button.use').click());
  assert.equal(await page.inputValue('#terms'), three.terms.join(', '));
  await assertCoefRows(3);
  await page.click('#undo-button');
  assert.equal(await page.inputValue('#terms'), DEMO_TERMS, 'Undo takes the chosen terms back');
  const overflow = await page.evaluate(() => document.documentElement.scrollWidth - window.innerWidth);
  assert.ok(overflow <= 0, `no sideways scrolling at 1366 wide (overflow ${overflow}px)`);
});

test('Stop during a long search ends the worker, starts a fresh one and keeps the data', { timeout: 120000 }, async () => {
  await openFresh();
  await page.setInputFiles('#file-input', { name: 'noise-26.csv', mimeType: 'text/csv', buffer: Buffer.from(bigNoiseCsv()) });
  await page.locator('#data-facts').filter({ hasText: 'noise-26.csv' }).waitFor({ timeout: 15000 });
  assert.match(await page.textContent('#data-facts'), /400 rows of data, 27 columns/);
  await page.selectOption('#response-column', 'y');
  assert.equal(splitCount(await page.inputValue('#candidates')), 26, 'the 26 columns are the candidates');
  // Every subset of 26 terms, then again on each resample: minutes of work.
  await page.check('#stability');
  await page.fill('#resamples', '100');
  const workersBefore = workers.length;
  const before = await page.evaluate(() => window.plumblineTest.searchesDone());
  await page.click('#search-button');
  await page.waitForFunction(() => Number(document.getElementById('search-progress').getAttribute('aria-valuenow')) > 0, null, { timeout: 30000 });
  assert.ok(await page.isVisible('#stop-button'), 'Stop is offered while it runs');
  assert.ok(await page.isDisabled('#search-button'));
  const mid = Number(await page.getAttribute('#search-progress', 'aria-valuenow'));
  await page.screenshot({ path: join(shots, '21-search-running.png'), clip: await page.locator('#choose').boundingBox() });
  await page.click('#stop-button');
  await page.waitForFunction((n) => window.plumblineTest.searchesDone() > n, before, { timeout: 10000 });
  assert.equal(await page.textContent('#search-status'), 'Stopped.');
  assert.ok(await page.isHidden('#stop-button'));
  assert.ok(await page.isHidden('#search-progress'));
  assert.ok(await page.isEnabled('#search-button'));
  assert.equal(await page.evaluate(() => document.activeElement && document.activeElement.id), 'search-button', 'the focus stays in the step');
  assert.ok(await page.isHidden('#choose-result'), 'no result from the stopped search');
  assert.ok(mid > 0 && mid < 100, `stopped part way (${mid}%)`);
  for (let i = 0; i < 50 && workers.length === workersBefore; i++) await page.waitForTimeout(100);
  assert.equal(workers.length, workersBefore + 1, 'a fresh worker was started');
  // The data stay, and the fresh worker fits and searches them.
  assert.match(await page.textContent('#data-facts'), /noise-26\.csv: 400 rows of data/);
  await page.fill('#terms', 'x01, x02');
  await afterFit(() => page.click('#fit-button'));
  await assertCoefRows(3);
  assert.ok(await page.isHidden('#model-message'));
  await page.uncheck('#stability');
  await page.fill('#candidates', 'x01, x02, x03');
  await afterSearch(() => page.click('#search-button'));
  assert.match(await page.textContent('#search-status'), /^Done: /);
  assert.ok((await page.locator('#comparison-table tbody tr').count()) >= 1);
});

function plural(k, word) {
  return `${k} ${k === 1 ? word : `${word}s`}`;
}

function splitCount(text) {
  return text.split(',').map((t) => t.trim()).filter(Boolean).length;
}

test('the Checks step shows the findings and tables and draws every figure', { timeout: 90000 }, async () => {
  await openFresh();
  const drawn = await page.evaluate(() => window.plumblineTest.figuresDrawn());
  await afterFit(() => page.click('#demo-button'));
  await checksDrawn(drawn);
  const cli = cliCheck(demoCsv, { response: DEMO_RESPONSE, terms: DEMO_TERMS });
  const plotsDir = join(shots, 'cli-plots');
  execFileSync(cliPath, ['check', demoCsv, '--response', DEMO_RESPONSE, '--terms', DEMO_TERMS, '--plots', plotsDir]);
  const cliFigures = readdirSync(plotsDir).filter((f) => f.endsWith('.png')).map((f) => f.replace(/\.png$/, '')).sort();

  // Findings: ranked, severity in words.
  const findings = await page.$$eval('#findings li', (lis) => lis.map((l) => [l.querySelector('.sev').textContent, l.querySelector('.finding-text').textContent]));
  const words = { 3: 'Act on it', 2: 'Look at it', 1: 'Worth knowing', 0: 'Nothing found' };
  const ranked = cli.findings.map((f, i) => [f, i]).sort((a, b) => b[0].severity - a[0].severity || a[1] - b[1]).map(([f]) => [words[f.severity], f.text]);
  assert.deepEqual(findings, ranked);
  assert.ok(findings.length > 0);
  // The tests, the VIFs and the most influential rows.
  const tests = await page.$$eval('#tests-table tbody tr', (trs) => trs.map((tr) => [tr.querySelector('th').textContent, tr.querySelector('td.num') ? tr.querySelectorAll('td.num')[2].dataset.full : '']));
  const byName = Object.fromEntries(tests);
  assert.ok(relClose(Number(byName['Shapiro–Wilk']), cli.normality.shapiro_wilk.p_value, 1e-9));
  assert.ok(relClose(Number(byName['Breusch–Pagan']), cli.breusch_pagan.p_value, 1e-9));
  assert.equal(tests.filter(([n]) => n.startsWith('Curvature: ')).length, cli.curvature.length);
  const vif = await page.$$eval('#vif-table tbody tr', (trs) => trs.map((tr) => [tr.querySelector('th').textContent, tr.querySelectorAll('td.num')[3].dataset.full]));
  assert.deepEqual(vif.map((v) => v[0]), cli.collinearity.terms.map((t) => t.term));
  cli.collinearity.terms.forEach((t, i) => assert.ok(relClose(Number(vif[i][1]), t.gvif_adjusted, 1e-9), t.term));
  const influential = await page.$$eval('#influence-table tbody tr', (trs) => trs.map((tr) => Number(tr.querySelector('th').textContent)));
  const top = [...cli.rows].sort((a, b) => b.cooks_distance - a.cooks_distance).slice(0, 10).map((r) => r.row);
  assert.deepEqual(influential, top, 'the ten rows of largest Cook\'s distance, numbered as in the file');
  assert.equal(await page.textContent('#influence-table thead th:first-child'), 'File row');
  assert.deepEqual(await page.$$eval('#checks-cautions li', (lis) => lis.map((l) => l.textContent)), cli.fit.cautions);

  // Every figure drawn, on its own canvas, none blank.
  const canvases = await page.$$eval('#plots canvas', (cs) => cs.map((c) => c.dataset.figure).sort());
  assert.deepEqual(canvases, cliFigures, 'one canvas per figure of the check');
  const problems = await page.$$eval('#plots .point-readout.problem', (ps) => ps.map((p) => p.textContent));
  assert.deepEqual(problems, [], 'every figure drew');
  const ink = await page.$$eval('#plots canvas', (cs) => cs.map((c) => {
    const d = c.getContext('2d').getImageData(0, 0, c.width, c.height).data;
    let inked = 0;
    // Drawn: opaque and not white (a canvas never drawn on is transparent).
    for (let i = 0; i < d.length; i += 4) if (d[i + 3] > 0 && (d[i] < 245 || d[i + 1] < 245 || d[i + 2] < 245)) inked++;
    return [c.dataset.figure, inked / (c.width * c.height)];
  }));
  for (const [id, share] of ink) assert.ok(share > 0.01, `${id}: ${(share * 100).toFixed(2)}% of its pixels are drawn`);
  console.log(`  ${ink.length} figures drawn; drawn share of pixels ${ink.map(([, s]) => `${(s * 100).toFixed(1)}%`).join(', ')}`);
  await page.locator('#checks').screenshot({ path: join(shots, '22-checks.png') });
  await page.setViewportSize({ width: 1920, height: 1080 });
  await page.locator('#checks').screenshot({ path: join(shots, '23-checks-1920x1080.png') });
  const wide = await page.evaluate(() => document.documentElement.scrollWidth - window.innerWidth);
  await page.setViewportSize({ width: 1366, height: 768 });
  const overflow = await page.evaluate(() => document.documentElement.scrollWidth - window.innerWidth);
  assert.ok(overflow <= 0 && wide <= 0, `no sideways scrolling (1366: ${overflow}px, 1920: ${wide}px)`);
});

test('pointing at a dot of the residual plot tells its row, one that is in the data', { timeout: 60000 }, async () => {
  // Still on the demo's checks from the test before.
  const cli = cliCheck(demoCsv, { response: DEMO_RESPONSE, terms: DEMO_TERMS });
  const rowsInData = new Set(cli.rows.map((r) => r.row));
  const id = await page.$eval('#plots canvas[data-figure="residuals-vs-fitted"]', (c) => c.id);
  const canvas = page.locator(`#${id}`);
  const tip = page.locator(`.plot-stage:has(#${id}) .tip`);
  await canvas.scrollIntoViewIfNeeded();
  const box = await canvas.boundingBox();
  const n = (await page.evaluate((cid) => window.plumblineTest.figurePoint(cid, 0), id)).count;
  assert.equal(n, cli.rows.length, 'one dot per row used');
  let onInk = 0;
  const picks = [0, Math.floor(n / 4), Math.floor(n / 2), Math.floor((3 * n) / 4), n - 1];
  for (const i of picks) {
    const p = await page.evaluate(([cid, k]) => window.plumblineTest.figurePoint(cid, k), [id, i]);
    await page.mouse.move(box.x + p.x, box.y + p.y);
    await tip.waitFor({ state: 'visible', timeout: 5000 });
    const text = await tip.textContent();
    const m = /^File row (\d+)/.exec(text);
    assert.ok(m, `the tip names a file row (${text})`);
    const row = Number(m[1]);
    assert.ok(rowsInData.has(row), `row ${row} is a row of the fit`);
    // The dot under the pointer is the one drawn there: the page's idea of
    // the plotting area matches draw.rs (the pixel there is a dot's blue).
    const px = await page.$eval(`#${id}`, (c, q) => [...c.getContext('2d').getImageData(Math.round(q.px), Math.round(q.py), 1, 1).data], p);
    if (px[2] > px[0] + 40) onInk++;
    // The nearest dot is this one, or one at the same place.
    assert.ok(row === p.row || text.includes(`File row ${row}`), `row ${row} (the hook says ${p.row})`);
  }
  assert.ok(onInk >= 4, `the dots are where the page thinks they are (${onInk} of ${picks.length} on a dot's colour)`);
  assert.match(await page.locator(`.plot:has(#${id}) .point-readout`).textContent(), /File row \d+/);
  await page.screenshot({ path: join(shots, '24-point-row.png'), clip: await page.locator(`.plot:has(#${id})`).boundingBox() });
  // From the keyboard too.
  await canvas.focus();
  await page.keyboard.press('Home');
  const first = await page.evaluate((cid) => window.plumblineTest.figurePoint(cid, 0), id);
  assert.match(await tip.textContent(), new RegExp(`^File row ${first.row}(?!\\d)`));
  await page.keyboard.press('ArrowRight');
  const second = await page.evaluate((cid) => window.plumblineTest.figurePoint(cid, 1), id);
  assert.match(await page.locator(`.plot:has(#${id}) .point-readout`).textContent(), new RegExp(`File row ${second.row}(?!\\d)`));
  await page.keyboard.press('Escape');
  assert.ok(await tip.isHidden());
});

test('a row chosen in the Checks can be left out of the fit, and taken back in', { timeout: 90000 }, async () => {
  // Still on the demo's checks.
  const excludedNow = () => page.$$eval('#excluded-checks li', (lis) => lis.map((l) => Number(/\d+/.exec(l.textContent)[0])));
  const refit = async (action) => {
    const drawn = await page.evaluate(() => window.plumblineTest.figuresDrawn());
    await afterFit(action);
    await checksDrawn(drawn);
  };
  const coefMatchCli = async (exclude) => {
    const cli = cliFit(demoCsv, { response: DEMO_RESPONSE, terms: DEMO_TERMS, exclude });
    const rows = await coefTableFromPage();
    cli.coefficients.forEach((c, i) => assert.ok(relClose(fromFull(rows[i].cells[0].full), c.estimate, 1e-9), `${c.term} without rows ${exclude.join(', ')}`));
    assert.ok((await page.textContent('#rows-line')).startsWith(`${cli.n} of 240 rows used.`));
  };
  assert.ok(await page.isHidden('#excluded-checks'), 'nothing left out yet');
  // Click a dot: its row gets a button that leaves it out.
  const id = await page.$eval('#plots canvas[data-figure="residuals-vs-fitted"]', (c) => c.id);
  const canvas = page.locator(`#${id}`);
  await canvas.scrollIntoViewIfNeeded();
  const box = await canvas.boundingBox();
  const p = await page.evaluate((cid) => window.plumblineTest.figurePoint(cid, 100), id);
  await page.mouse.click(box.x + p.x, box.y + p.y);
  const leave = page.locator(`.plot:has(#${id}) .point-actions button.exclude`);
  await leave.waitFor({ timeout: 5000 });
  const tipRow = Number(/File row (\d+)/.exec(await page.locator(`.plot:has(#${id}) .point-readout`).textContent())[1]);
  assert.equal(await leave.textContent(), `Leave file row ${tipRow} out of the fit`);
  await refit(() => leave.click());
  assert.deepEqual(await excludedNow(), [tipRow]);
  assert.match(await page.textContent('#rows-line'), new RegExp(`Left out: 1 row by you \\(file row ${tipRow}\\);`));
  await coefMatchCli([tipRow]);
  assert.ok(await page.isVisible('#excluded-model'), 'the Model step lists it too');
  const n = (await page.evaluate((cid) => window.plumblineTest.figurePoint(cid, 0), id)).count;
  assert.equal(n, 233, 'the new figures have one dot fewer');
  // The most influential row, from its table.
  const first = page.locator('#influence-table tbody tr').first();
  assert.equal(await first.locator('th').textContent(), '138');
  await refit(() => first.locator('button.exclude').click());
  assert.deepEqual(await excludedNow(), [tipRow, 138]);
  await coefMatchCli([tipRow, 138]);
  assert.ok(!(await page.$$eval('#influence-table tbody th', (ths) => ths.map((t) => t.textContent))).includes('138'), 'row 138 is no longer in the fit');
  await page.locator('#checks').screenshot({ path: join(shots, '25-rows-left-out.png'), clip: undefined });
  // Include again, and Undo step by step.
  await refit(() => page.locator('#excluded-checks li').filter({ hasText: `File row ${tipRow} ` }).locator('button.include').click());
  assert.deepEqual(await excludedNow(), [138]);
  await coefMatchCli([138]);
  await refit(() => page.click('#excluded-checks button.undo-excluded'));
  assert.deepEqual(await excludedNow(), [tipRow, 138]);
  await refit(() => page.click('#excluded-checks button.undo-excluded'));
  await refit(() => page.click('#excluded-checks button.undo-excluded'));
  assert.deepEqual(await excludedNow(), []);
  assert.equal(await page.textContent('#rows-line'), DEMO_ROWS_LINE, 'every row is back');
  assert.ok(await page.isHidden('#excluded-checks') && await page.isHidden('#excluded-model'), 'nothing left out and nothing to undo: the list goes');
});

function cliPredict(file, newFile, { response, terms }) {
  return JSON.parse(execFileSync(cliPath, ['predict', file, '--response', response, '--terms', terms, '--new', newFile, '--json'], { encoding: 'utf8', maxBuffer: 64 << 20 }));
}

/** Runs a page action that starts a prediction and waits until the page has its answer. */
async function afterPredict(action) {
  const before = await page.evaluate(() => window.plumblineTest.predictsDone());
  await action();
  await page.waitForFunction((n) => window.plumblineTest.predictsDone() > n, before, { timeout: 20000 });
}

/** The predictions table: per body row, its header and the full values of its numbers. */
async function predictionsFromPage() {
  return page.$$eval('#predictions-table tbody tr:not(.reason-row)', (trs) => trs.map((tr) => {
    const next = tr.nextElementSibling;
    return {
      row: tr.querySelector('th') ? tr.querySelector('th').textContent : null,
      full: [...tr.querySelectorAll('td.num')].map((td) => td.dataset.full),
      shown: [...tr.querySelectorAll('td.num')].map((td) => td.textContent),
      note: (tr.querySelector('td.row-note, td.row-problem') || { textContent: '' }).textContent,
      reasons: next && next.classList.contains('reason-row') ? next.textContent : null,
      className: tr.className,
    };
  }));
}

const PRED_FIELDS = ['estimate', 'ci_low', 'ci_high', 'pi_low', 'pi_high'];
const NEW_CASES_CSV = 'building_id,climate_zone,floor_area_m2,occupants,building_age,mean_outdoor_temp_c,hvac_type,retrofit\n'
  + 'N-1,1,2436,101,80,17.5,district heat,0\n'
  + 'N-2,2,2000000,50,10,10,heat pump,1\n'
  + 'N-3,3,1500,,20,12,gas boiler,0\n'
  + 'N-4,4,1500,40,20,12,steam,0\n'
  + 'N-5,5,1500,abc,20,12,gas boiler,0\n';

/** A page row of predictions equals the CLI's prediction, on both scales, to a relative 1e-9. */
function assertPredictionRow(got, want, what) {
  const expected = [...PRED_FIELDS.map((f) => want.original[f]), ...PRED_FIELDS.map((f) => want[f]), want.leverage];
  assert.equal(got.full.length, expected.length, `${what}: every number is there`);
  got.full.forEach((v, j) => assert.ok(relClose(fromFull(v), expected[j], 1e-9), `${what} number ${j + 1}: page ${v}, CLI ${expected[j]}`));
}

test('Predict: the one-case form and a file of new cases give the CLI\'s predictions, intervals, flags and reasons', { timeout: 90000 }, async () => {
  await openFresh();
  await afterFit(() => page.click('#demo-button'));
  await caseFormOfThisFit();
  assert.ok(await page.isVisible('#predict'), 'the Predict step is shown after a fit');
  // One control per column the model reads, in the order of the terms: a
  // list of the model's own levels for a category, a number box otherwise.
  const fields = await page.$$eval('#case-fields [data-column]', (fs) => fs.map((f) => [f.dataset.column, f.tagName, f.type,
    f.tagName === 'SELECT' ? [...f.options].slice(1).map((o) => o.value) : null, f.labels[0].textContent]));
  assert.deepEqual(fields.map((f) => f[0]), ['climate_zone', 'floor_area_m2', 'occupants', 'building_age', 'mean_outdoor_temp_c', 'hvac_type', 'retrofit']);
  assert.deepEqual(fields.find((f) => f[0] === 'hvac_type').slice(1, 4), ['SELECT', 'select-one', ['district heat', 'gas boiler', 'heat pump']]);
  assert.deepEqual(fields.find((f) => f[0] === 'climate_zone')[3], ['1', '2', '3', '4', '5']);
  assert.deepEqual(fields.find((f) => f[0] === 'floor_area_m2').slice(1, 3), ['INPUT', 'number']);
  for (const f of fields) assert.equal(f[4], f[0], `${f[0]} is labelled with its column name`);

  // An empty box: a plain message, nothing sent.
  const sent = await page.evaluate(() => window.plumblineTest.predictsDone());
  await page.click('#case-button');
  assert.match(await visibleText('#predict-message'), /Give a value for each of climate_zone, floor_area_m2, .*retrofit first/);
  assert.equal(await page.evaluate(() => window.plumblineTest.predictsDone()), sent, 'nothing was sent to the worker');

  // The first row of the demo data, typed into the form (Enter predicts).
  const first = { climate_zone: '1', floor_area_m2: '2436', occupants: '101', building_age: '80', mean_outdoor_temp_c: '17.5', hvac_type: 'district heat', retrofit: '0' };
  for (const [k, v] of Object.entries(first)) {
    const sel = `#case-fields [data-column="${k}"]`;
    if (fields.find((f) => f[0] === k)[1] === 'SELECT') await page.selectOption(sel, v);
    else await page.fill(sel, v);
  }
  await afterPredict(() => page.press('#case-fields [data-column="retrofit"]', 'Enter'));
  assert.ok(await page.isHidden('#predict-message'));
  const newPath = join(shots, 'new-cases.csv');
  writeFileSync(newPath, NEW_CASES_CSV);
  const cli = cliPredict(demoCsv, newPath, { response: DEMO_RESPONSE, terms: DEMO_TERMS });
  let rows = await predictionsFromPage();
  assert.equal(rows.length, 1);
  assert.equal(rows[0].row, 'This case');
  assertPredictionRow(rows[0], cli.predictions[0], 'the case in the form');
  assert.equal(rows[0].note, 'within the data');
  const summary = await page.textContent('#case-summary');
  assert.match(summary, /^energy_mwh: 646\.72\. For the average of cases like this one, 555\.98 to 752\.27; for this one case, 331\.82 to 1154\.4 \(95% intervals\)\.$/);
  assert.ok(relClose(Number(await page.getAttribute('#case-summary .big', 'title').then((t) => t.split(': ')[1])), cli.predictions[0].original.estimate, 1e-12));
  assert.match(await page.textContent('#predict-facts'), /back-transformed by exp, with Duan's smearing \(smearing factor 1\.04495\)/);
  assert.deepEqual(await page.$$eval('#predict-cautions li', (lis) => lis.map((l) => l.textContent)), cli.cautions, 'the cautions are shown');
  await page.locator('#predict').screenshot({ path: join(shots, '26-predict-one-case.png') });

  // A case far outside the data is flagged, with the reasons.
  await page.fill('#case-fields [data-column="floor_area_m2"]', '2000000');
  await afterPredict(() => page.click('#case-button'));
  assert.match(await page.textContent('#case-summary'), /It lies outside the data: floor_area_m2 = 2000000 is above the largest value in the data \(495800\); its combination of values is further from the data than any fitted row/);
  rows = await predictionsFromPage();
  assert.equal(rows[0].className, 'extrapolation');
  assert.equal(rows[0].note, 'outside the data');
  assert.match(rows[0].reasons, /^This case is outside the data: floor_area_m2 = 2000000 is above the largest value in the data/);

  // A file of new cases through the file input: every row the CLI's, the
  // rows that cannot be predicted with the CLI's reasons.
  await afterPredict(() => page.setInputFiles('#cases-file', { name: 'new-cases.csv', mimeType: 'text/csv', buffer: Buffer.from(NEW_CASES_CSV) }));
  assert.ok(await page.isHidden('#predict-message'), await page.textContent('#predict-message'));
  assert.ok(await page.isHidden('#case-summary'), 'no one-case sentence for a file');
  rows = await predictionsFromPage();
  assert.deepEqual(rows.map((r) => r.row), cli.predictions.map((p) => String(p.row)), 'rows numbered as in the new file');
  assert.equal(await page.textContent('#predictions-table thead th:first-child'), 'File row');
  cli.predictions.forEach((want, i) => {
    if (want.problem) {
      assert.equal(rows[i].note, want.problem, `row ${want.row}: the reason in plain words`);
      assert.equal(rows[i].className, 'problem');
      assert.equal(rows[i].full.length, 0);
    } else {
      assertPredictionRow(rows[i], want, `file row ${want.row}`);
      assert.equal(rows[i].className, want.extrapolation ? 'extrapolation' : '');
      if (want.extrapolation) assert.equal(rows[i].reasons, `File row ${want.row} is outside the data: ${want.extrapolation_reasons.join('; ')}.`);
      else assert.equal(rows[i].reasons, null);
    }
  });
  assert.match(rows[2].note, /no value in "occupants"/);
  assert.match(rows[3].note, /"steam" in "hvac_type", a value the model never saw/);
  assert.match(await page.textContent('#predict-facts'), /new-cases\.csv: 2 of 5 rows predicted/);
  assert.deepEqual(await page.$$eval('#predict-notes li', (lis) => lis.map((l) => l.textContent)), cli.notes);
  await page.locator('#predict').screenshot({ path: join(shots, '27-predict-file.png') });

  // Copy predictions: tab-separated, every digit.
  await context.grantPermissions(['clipboard-read', 'clipboard-write']);
  await page.click('#copy-predictions');
  await page.locator('#copy-predictions-status').filter({ hasText: 'Copied 5 rows' }).waitFor({ timeout: 5000 });
  const clip = await page.evaluate(() => navigator.clipboard.readText());
  assert.equal(clip, await page.evaluate(() => window.plumblineTest.copiedText()));
  const lines = clip.trimEnd().split('\n').map((l) => l.split('\t'));
  assert.equal(lines.length, 6);
  assert.deepEqual(lines[0].slice(0, 7), ['row', 'estimate', 'mean low', 'mean high', 'case low', 'case high', 'original scale estimate']);
  // Every digit the page holds is copied, and they are the CLI's numbers.
  lines.slice(1).forEach((cells, i) => {
    assert.equal(cells[0], String(cli.predictions[i].row));
    const numbers = [...cells.slice(6, 11), ...cells.slice(1, 6), cells[11]].filter((c) => c !== '').map(Number);
    assert.deepEqual(numbers, rows[i].full.map(Number), `file row ${cells[0]} copied in full`);
  });
  assert.ok(relClose(Number(lines[1][1]), cli.predictions[0].estimate, 1e-9));
  assert.ok(relClose(Number(lines[1][6]), cli.predictions[0].original.estimate, 1e-9));
  assert.equal(lines[4].at(-1), cli.predictions[3].problem);

  // A file without a column the model needs: the wasm's words; the data, the
  // model and the form stay.
  await afterPredict(() => page.setInputFiles('#cases-file', { name: 'short.csv', mimeType: 'text/csv', buffer: Buffer.from('climate_zone,floor_area_m2\n1,2000\n') }));
  const msg = await visibleText('#predict-message');
  assert.match(msg, /^No predictions could be made of "short\.csv"\. In the new cases: There is no column called "occupants"\./);
  assert.equal(await page.inputValue('#case-fields [data-column="floor_area_m2"]'), '2000000', 'the form keeps its values');
  assert.match(await page.textContent('#data-facts'), /240 rows of data/);
  assert.equal(await page.inputValue('#terms'), DEMO_TERMS);
  // A broken file of new cases: the reader's words.
  await page.setInputFiles('#cases-file', { name: 'broken.xlsx', mimeType: 'application/octet-stream', buffer: Buffer.from('PK') });
  await page.locator('#predict-message').filter({ hasText: 'broken.xlsx' }).waitFor({ timeout: 10000 });
  assert.match(await page.textContent('#predict-message'), /^"broken\.xlsx" could not be opened: /);

  // Pasted new cases (tab-separated, as a spreadsheet copies them).
  const pasted = NEW_CASES_CSV.split('\n').slice(0, 3).map((l) => l.split(',').join('\t')).join('\n');
  await page.fill('#cases-paste', pasted);
  await afterPredict(() => page.click('#cases-paste-button'));
  rows = await predictionsFromPage();
  assert.equal(rows.length, 2);
  assert.equal(await page.textContent('#predictions-table thead th:first-child'), 'Pasted row');
  assertPredictionRow(rows[0], cli.predictions[0], 'pasted row 2');
  assertPredictionRow(rows[1], cli.predictions[1], 'pasted row 3');

  // A new fit marks the predictions as out of date and keeps the form's values.
  await page.fill('#terms', 'log(floor_area_m2), cat(hvac_type)');
  await afterFit(() => page.click('#fit-button'));
  await page.waitForFunction(() => document.querySelectorAll('#case-fields [data-column]').length === 2, null, { timeout: 15000 });
  assert.ok(await page.isVisible('#predict-stale'), 'the predictions are marked as of an earlier model');
  assert.equal(await page.inputValue('#case-fields [data-column="floor_area_m2"]'), '2000000');
  assert.equal(await page.inputValue('#case-fields [data-column="hvac_type"]'), 'district heat');
  await afterPredict(() => page.click('#case-button'));
  assert.ok(await page.isHidden('#predict-stale'));
  assert.equal((await predictionsFromPage()).length, 1);
});

/** Clicks a button that offers a download and returns the file's name and bytes. */
async function downloadOf(selector) {
  const [dl] = await Promise.all([page.waitForEvent('download', { timeout: 20000 }), page.click(selector)]);
  const path = join(shots, `download-${dl.suggestedFilename()}`);
  await dl.saveAs(path);
  return { name: dl.suggestedFilename(), bytes: readFileSync(path), path };
}

/** Opens a session file through its file input and waits until the page has dealt with it. */
async function openSessionThroughPage(name, buffer) {
  const before = await page.evaluate(() => window.plumblineTest.sessionsOpened());
  await page.setInputFiles('#session-file', { name, mimeType: 'application/json', buffer });
  await page.waitForFunction((n) => window.plumblineTest.sessionsOpened() > n, before, { timeout: 30000 });
}

test('Exports: copies of the comparison, the formula, the workbook, the report and the session, from the wasm', { timeout: 180000 }, async () => {
  await openFresh();
  const drawn = await page.evaluate(() => window.plumblineTest.figuresDrawn());
  await afterFit(() => page.click('#demo-button'));
  await checksDrawn(drawn);
  await afterSearch(() => page.click('#search-button'));
  await caseFormOfThisFit();
  await afterPredict(() => page.setInputFiles('#cases-file', { name: 'new-cases.csv', mimeType: 'text/csv', buffer: Buffer.from(NEW_CASES_CSV) }));
  assert.ok(await page.isVisible('#keep'), 'the step is shown after a fit');
  const cli = cliFit(demoCsv, { response: DEMO_RESPONSE, terms: DEMO_TERMS });
  const cliSel = cliSelect(demoCsv, { response: DEMO_RESPONSE, candidates: DEMO_TERMS });

  // Copy the comparison: the CLI's sets, every digit.
  await context.grantPermissions(['clipboard-read', 'clipboard-write']);
  await page.click('#copy-candidates');
  await page.locator('#copy-candidates-status').filter({ hasText: `Copied ${cliSel.comparison.length} rows` }).waitFor({ timeout: 10000 });
  const cand = (await page.evaluate(() => navigator.clipboard.readText())).trimEnd().split('\n').map((l) => l.split('\t'));
  assert.equal(cand.length, cliSel.comparison.length + 1);
  const bicAt = cand[0].indexOf('BIC');
  assert.ok(bicAt > 0, `a BIC column (${cand[0].join(', ')})`);
  cliSel.comparison.forEach((c, i) => assert.ok(relClose(Number(cand[i + 1][bicAt]), c.bic, 1e-9), `BIC of set ${i + 1}`));

  // The formula: the columns guessed from the data's order, the first row
  // below the header, every coefficient at full precision.
  const cells = await page.$$eval('#formula-cells input', (fs) => fs.map((f) => [f.dataset.column, f.value, f.labels[0].textContent]));
  assert.deepEqual(cells.map((c) => c.slice(0, 2)), [['climate_zone', 'C'], ['floor_area_m2', 'D'], ['occupants', 'E'], ['building_age', 'F'],
    ['mean_outdoor_temp_c', 'G'], ['hvac_type', 'H'], ['retrofit', 'I']]);
  assert.equal(await page.inputValue('#formula-row'), '2');
  const exportsBefore = await page.evaluate(() => window.plumblineTest.exportsDone());
  await page.click('#formula-button');
  await page.waitForFunction((n) => window.plumblineTest.exportsDone() > n, exportsBefore, { timeout: 10000 });
  let formula = await page.inputValue('#formula-text');
  assert.match(formula, /^=EXP\(/, 'a log response comes back on its own scale');
  // Every digit of the coefficients the page shows (the CLI's to 1e-9, as the tests above check).
  for (const row of await coefTableFromPage()) {
    const digits = String(Math.abs(Number(row.cells[0].full)));
    assert.ok(formula.includes(digits), `${row.term}: ${digits} in the formula`);
  }
  for (const ref of ['IF(C2=2;1;0)', 'LN(D2)', 'LN(E2)', 'F2', 'G2', 'IF(EXACT(H2;"gas boiler");1;0)', 'I2']) assert.ok(formula.includes(ref), `${ref} in the formula`);
  assert.match(await page.textContent('#formula-notes'), /smearing/);
  await page.click('#formula-copy');
  await page.locator('#formula-copy-status').filter({ hasText: 'Copied' }).waitFor({ timeout: 5000 });
  assert.equal(await page.evaluate(() => navigator.clipboard.readText()), formula);
  // Other cells, another row and the comma separator.
  await page.fill('#formula-cells input[data-column="floor_area_m2"]', 'k');
  await page.fill('#formula-row', '5');
  await page.selectOption('#formula-separator', ',');
  await page.press('#formula-row', 'Enter');
  await page.waitForFunction(() => document.getElementById('formula-text').value.includes('LN(K5)'), null, { timeout: 10000 });
  formula = await page.inputValue('#formula-text');
  assert.ok(formula.includes('IF(C5=2,1,0)'), 'the comma separates the arguments');
  assert.equal(await page.textContent('#formula-first'), '5');
  // No cell for a column: the wasm's words, the rest stays.
  await page.fill('#formula-cells input[data-column="occupants"]', '');
  await page.click('#formula-button');
  assert.match(await visibleText('#keep-message'), /^The formula could not be written\. .*occupants/);
  assert.equal(await page.inputValue('#formula-cells input[data-column="floor_area_m2"]'), 'k', 'what was typed stays');
  await page.fill('#formula-cells input[data-column="occupants"]', 'E');
  await page.fill('#formula-cells input[data-column="floor_area_m2"]', 'D');
  await page.fill('#formula-row', '2');
  await page.selectOption('#formula-separator', ';');
  await page.click('#formula-button');
  await page.waitForFunction(() => document.getElementById('formula-text').value.includes('LN(D2)'), null, { timeout: 10000 });
  assert.ok(await page.isHidden('#keep-message'));
  await page.locator('#keep').screenshot({ path: join(shots, '29-take-it-with-you.png') });

  // The results workbook: a real xlsx whose sheets read back, through the
  // page's own reader, to the CLI's numbers.
  const wb = await downloadOf('#workbook-button');
  assert.equal(wb.name, 'building-energy-results.xlsx');
  assert.equal(wb.bytes.subarray(0, 2).toString(), 'PK', 'a zip container');
  const sheets = await page.evaluate((b64) => window.plumblineTest.inspect(Uint8Array.from(atob(b64), (c) => c.charCodeAt(0)), {}), wb.bytes.toString('base64'));
  assert.deepEqual(sheets.ok.load.sheets, ['Model', 'Coefficients', 'Candidates', 'Rows', 'Predictions']);
  const coefSheet = await page.evaluate((b64) => window.plumblineTest.inspect(Uint8Array.from(atob(b64), (c) => c.charCodeAt(0)), { sheet: 'Coefficients', preview_rows: 50 }), wb.bytes.toString('base64'));
  const head = coefSheet.ok.preview.header;
  assert.equal(coefSheet.ok.preview.rows.length, cli.coefficients.length);
  cli.coefficients.forEach((c, i) => {
    const row = coefSheet.ok.preview.rows[i];
    assert.equal(row[head.indexOf('term')], c.term);
    for (const [key, name] of [['estimate', 'estimate'], ['std_error', 'standard error'], ['p_value', 'p-value']]) {
      assert.ok(relClose(Number(row[head.indexOf(name)]), c[key], 1e-9), `workbook ${c.term} ${key}: ${row[head.indexOf(name)]}, CLI ${c[key]}`);
    }
  });
  const predSheet = await page.evaluate((b64) => window.plumblineTest.inspect(Uint8Array.from(atob(b64), (c) => c.charCodeAt(0)), { sheet: 'Predictions', preview_rows: 50 }), wb.bytes.toString('base64'));
  assert.equal(predSheet.ok.preview.rows.length, 5, 'the predictions shown');

  // The report: self-contained HTML with the file's SHA-256, the figures as
  // PNG, the formula and the cautions.
  const rep = await downloadOf('#report-button');
  assert.equal(rep.name, 'building-energy-report.html');
  const html = rep.bytes.toString('utf8');
  const sha = createHash('sha256').update(readFileSync(demoCsv)).digest('hex');
  assert.ok(html.includes(sha), 'the SHA-256 of the demo file');
  assert.ok(html.includes('building-energy.csv'));
  const canvases = await page.locator('#plots canvas').count();
  assert.equal((html.match(/<img [^>]*src="data:image\/png;base64,/g) || []).length, canvases, 'every figure, as PNG');
  formula = await page.inputValue('#formula-text');
  assert.ok(html.includes(formula.replace(/"/g, '&quot;')), 'the formula written last');
  for (const c of cli.cautions) assert.ok(html.includes(c.replace(/'/g, '&#39;')), `the caution: ${c}`);
  assert.match(html, /<meta http-equiv="Content-Security-Policy"/);
  assert.doesNotMatch(html, /\b(?:https?|wss?):\/\//, 'the report points nowhere else');

  // The session: saved, the choices changed, reopened: every choice back and the same numbers.
  await page.check('#session-data');
  await page.uncheck('#session-data');
  const ses = await downloadOf('#session-save');
  assert.equal(ses.name, 'building-energy-session.json');
  const saved = JSON.parse(ses.bytes.toString('utf8'));
  assert.equal(saved.format, 'plumbline-session');
  assert.equal(saved.data, null, 'no data unless asked');
  assert.equal(saved.source.sha256, sha);
  assert.deepEqual(saved.model, { response: DEMO_RESPONSE, terms: DEMO_TERMS, intercept: true, weights: null, exclude_rows: [], level: 0.95, hc3: false });
  const coefBefore = await coefTableFromPage();
  await page.fill('#terms', 'retrofit');
  await page.selectOption('#response-transform', '');
  await page.fill('#candidates', 'retrofit');
  await afterFit(() => openSessionThroughPage(ses.name, ses.bytes));
  assert.equal(await page.inputValue('#terms'), DEMO_TERMS);
  assert.equal(await page.inputValue('#response-transform'), 'log');
  assert.equal(await page.inputValue('#candidates'), DEMO_TERMS);
  assert.deepEqual(await coefTableFromPage(), coefBefore, 'the same numbers');
  assert.match(await visibleText('#session-notes'), /^Opened the session "building-energy-session\.json", saved \d{4}-\d\d-\d\d \d\d:\d\d\./);
  assert.ok(await page.isHidden('#data-message'));

  // A session that keeps the data opens on a fresh page, data and all.
  await page.check('#session-data');
  const withData = await downloadOf('#session-save');
  assert.ok(JSON.parse(withData.bytes.toString('utf8')).data.length > 1000, 'the data are kept');
  await openFresh();
  await afterFit(() => openSessionThroughPage('with-data.json', withData.bytes));
  assert.match(await page.textContent('#data-facts'), /building-energy\.csv \(from the session\): 240 rows of data/);
  assert.deepEqual(await coefTableFromPage(), coefBefore, 'the same numbers from the kept data');
  assert.match(await page.textContent('#session-notes'), /with the copy of the data it keeps/);

  // The session against other data: explained, not crashed on; the data stay.
  await openFile(join(files, 'deliveries.tsv'));
  await openSessionThroughPage(ses.name, ses.bytes);
  const notes = await visibleText('#session-notes');
  assert.match(notes, /These data are not the file the session was saved with \("building-energy\.csv"\)/);
  assert.match(notes, /The model uses columns that these data do not have: "energy_mwh"/);
  assert.match(notes, /it was not fitted/);
  assert.match(await page.textContent('#data-facts'), /deliveries\.tsv: 30 rows of data/);
  // A file that is not a session: plain words, and the data stay.
  await openSessionThroughPage('notes.json', Buffer.from('{"hello": 1}'));
  assert.match(await visibleText('#data-message'), /^The session "notes\.json" could not be opened: This JSON file is not a plumbline session file/);
  assert.match(await visibleText('#data-message'), /\("deliveries\.tsv"\) are still loaded/);
  await openSessionThroughPage('broken.json', Buffer.from('{"format": "plumbline-session", "version": 1, "model": '));
  assert.match(await visibleText('#data-message'), /could not be opened: This is not a session file \(it is not JSON/);
  assert.match(await page.textContent('#data-facts'), /deliveries\.tsv: 30 rows of data/);
  // A session without its data, on a page without data.
  await openFresh();
  await openSessionThroughPage(ses.name, ses.bytes);
  assert.match(await visibleText('#data-message'), /The session does not keep the data; load the data file first, then open the session\./);
});

test('the codes of a coded category get names: shown beside the codes, undoable, saved in the session and said in the report', { timeout: 180000 }, async () => {
  await openFresh();
  const drawn = await page.evaluate(() => window.plumblineTest.figuresDrawn());
  await afterFit(() => page.click('#demo-button'));
  await checksDrawn(drawn);
  const zone = columnRow('climate_zone');
  const coefBefore = await coefTableFromPage();
  assert.deepEqual(coefBefore.slice(1, 5).map((r) => r.term), ['climate_zone=2', 'climate_zone=3', 'climate_zone=4', 'climate_zone=5']);
  // Offered for a coded category only.
  assert.equal(await zone.locator('button.name-codes').textContent(), 'Name the codes');
  assert.equal(await zone.locator('button.name-codes').getAttribute('aria-label'), 'Name the codes of climate_zone');
  for (const c of ['hvac_type', 'floor_area_m2', 'site_code', 'retrofit']) assert.equal(await columnRow(c).locator('button.name-codes').count(), 0, `${c}: no naming`);
  await page.locator('#equation').waitFor({ state: 'visible', timeout: 10000 });
  assert.match(await page.textContent('#equation'), /^log\(energy_mwh\) = 0\.5159 \+ 0\.136 × \[climate_zone is 2\] /, 'the equation, from the wasm');

  await zone.locator('button.name-codes').click();
  const editor = page.locator('#columns-table tr.codes-editor');
  await editor.waitFor({ timeout: 5000 });
  const inputs = editor.locator('input');
  assert.deepEqual(await inputs.evaluateAll((is) => is.map((i) => [i.dataset.code, i.getAttribute('aria-label')])),
    ['1', '2', '3', '4', '5'].map((k) => [k, `Name of code ${k} of climate_zone`]), 'one box per code of the data');
  assert.equal(await page.evaluate(() => document.activeElement.dataset.code), '1', 'the focus goes to the first box');
  // Bad names: a plain message, nothing changed, what was typed stays.
  await inputs.nth(0).fill('coastal');
  await inputs.nth(1).fill('Coastal');
  await editor.locator('button.use-names').click();
  assert.equal(await editor.locator('.message').textContent(),
    'Each code needs a name of its own: codes 1 and 2 are both called "Coastal". Change one of them; nothing has changed yet.');
  assert.equal(await page.getAttribute('#columns-table tr.codes-editor .message', 'role'), 'alert');
  assert.equal(await inputs.nth(0).inputValue(), 'coastal', 'what was typed stays');
  assert.equal(await page.evaluate(() => document.activeElement.dataset.code), '2', 'the focus goes to the box to change');
  await inputs.nth(1).fill('x'.repeat(61));
  await inputs.nth(1).press('Enter');
  assert.match(await editor.locator('.message').textContent(), /^A name can have at most 60 characters; the name of code 2 is longer\./);
  assert.deepEqual(await coefTableFromPage(), coefBefore, 'nothing changed');
  assert.ok(await page.isDisabled('#undo-button'), 'nothing to undo');
  // Good names; Enter uses them.
  await inputs.nth(1).fill('inland');
  await inputs.nth(2).fill('  highland ');
  await inputs.nth(2).press('Enter');
  await editor.waitFor({ state: 'detached', timeout: 5000 });
  const sentence = 'The codes of climate_zone are named: 1 = coastal, 2 = inland, 3 = highland.';
  assert.equal(await page.textContent('#columns-status'), `${sentence} Undo takes them back.`);
  assert.equal(await zone.locator('.code-names').textContent(), 'Named: 1 = coastal, 2 = inland, 3 = highland');
  assert.equal(await page.evaluate(() => document.activeElement.className), 'name-codes', 'the focus goes back to the button');
  await page.screenshot({ path: join(shots, '17b-codes-named.png'), clip: await page.locator('#columns').boundingBox() });

  // Labels only: the same model, the same numbers, the names beside the codes.
  assert.equal(await page.inputValue('#terms'), DEMO_TERMS, 'the terms still use the codes');
  assert.ok(await page.isHidden('#stale-note'), 'the fit is still the one shown');
  const coefNamed = await coefTableFromPage();
  assert.deepEqual(coefNamed.map((r) => r.term), ['(intercept)', 'climate_zone=2 (inland)', 'climate_zone=3 (highland)', 'climate_zone=4', 'climate_zone=5',
    ...coefBefore.slice(5).map((r) => r.term)]);
  assert.deepEqual(coefNamed.map((r) => r.cells), coefBefore.map((r) => r.cells), 'the same numbers');
  assert.deepEqual(await page.$$eval('#coef-table tbody th', (ths) => ths.slice(1, 3).map((t) => t.dataset.term)), ['climate_zone=2', 'climate_zone=3']);
  await page.waitForFunction(() => document.getElementById('equation').textContent.includes('[climate_zone is 2 (inland)]'), null, { timeout: 10000 });
  assert.match(await page.textContent('#equation'), /0\.136 × \[climate_zone is 2 \(inland\)\] − 0\.05029 × \[climate_zone is 3 \(highland\)\] \+ 0\.3247 × \[climate_zone is 4\]/);
  assert.ok(await page.isVisible('#names-copy-hint'));
  // Copies keep the codes.
  await context.grantPermissions(['clipboard-read', 'clipboard-write']);
  await page.click('#copy-button');
  await page.locator('#copy-status').filter({ hasText: 'Copied' }).waitFor({ timeout: 5000 });
  const copied = (await page.evaluate(() => navigator.clipboard.readText())).split('\n').map((l) => l.split('\t')[0]);
  assert.deepEqual(copied.slice(2, 4), ['climate_zone=2', 'climate_zone=3'], 'the copy has the codes, not the names');
  // The Predict form lists the levels with their names; the values sent are the codes.
  const options = await page.$$eval('#case-fields [data-column="climate_zone"] option', (os) => os.slice(1).map((o) => [o.value, o.textContent]));
  assert.deepEqual(options, [['1', '1 (coastal)'], ['2', '2 (inland)'], ['3', '3 (highland)'], ['4', '4'], ['5', '5']]);
  assert.match(await page.textContent('#case-fields .case-field:has([data-column="climate_zone"]) .case-range'), /the model compares them with 1 \(coastal\)$/);
  const first = { climate_zone: '1', floor_area_m2: '2436', occupants: '101', building_age: '80', mean_outdoor_temp_c: '17.5', hvac_type: 'district heat', retrofit: '0' };
  for (const [k, v] of Object.entries(first)) {
    const sel = `#case-fields [data-column="${k}"]`;
    if (await page.$eval(sel, (e) => e.tagName === 'SELECT')) await page.selectOption(sel, v);
    else await page.fill(sel, v);
  }
  await afterPredict(() => page.click('#case-button'));
  assert.match(await page.textContent('#predict-facts'), /^The case in the form: climate_zone = 1 \(coastal\), floor_area_m2 = 2436, /);
  const newPath = join(shots, 'new-cases.csv');
  writeFileSync(newPath, NEW_CASES_CSV);
  const cliPred = cliPredict(demoCsv, newPath, { response: DEMO_RESPONSE, terms: DEMO_TERMS });
  assertPredictionRow((await predictionsFromPage())[0], cliPred.predictions[0], 'the named case: the model of the codes');
  // A case with a code the model never saw lists the known codes with their names.
  await afterPredict(() => page.setInputFiles('#cases-file', { name: 'zone-9.csv', mimeType: 'text/csv',
    buffer: Buffer.from(NEW_CASES_CSV.split('\n')[0] + '\nN-9,9,1500,40,20,12,gas boiler,0\n') }));
  assert.equal((await predictionsFromPage())[0].note,
    'Row 2 has "9" in "climate_zone", a value the model never saw (it knows 1 (coastal), 2 (inland), 3 (highland), 4, 5); it cannot be predicted.');
  // A candidate with a named reference level shows the name in the comparison.
  await page.fill('#candidates', 'cat(climate_zone, ref=3), log(floor_area_m2)');
  await afterSearch(() => page.click('#search-button'));
  const sets = await page.$$eval('#comparison-table tbody th', (ths) => ths.map((t) => t.textContent));
  assert.ok(sets.some((t) => t.includes('cat(climate_zone, ref=3 (highland))')), `the candidates name the reference (${sets.join(' | ')})`);
  assert.equal(await page.textContent('#comparison-names'), 'Names of codes (labels only; the sets use the codes): climate_zone 1 = coastal, 2 = inland, 3 = highland.');

  // Undo takes the names back everywhere.
  await page.click('#undo-button');
  assert.equal(await page.textContent('#columns-status'), 'Undone: the codes of climate_zone have no names again.');
  assert.deepEqual((await coefTableFromPage()).map((r) => r.term), coefBefore.map((r) => r.term));
  assert.deepEqual(await page.$$eval('#case-fields [data-column="climate_zone"] option', (os) => os.slice(1).map((o) => o.textContent)), ['1', '2', '3', '4', '5']);
  await page.waitForFunction(() => !document.getElementById('equation').textContent.includes('(inland)'), null, { timeout: 10000 });
  assert.match(await page.textContent('#equation'), /0\.136 × \[climate_zone is 2\] − 0\.05029 × \[climate_zone is 3\] /);
  assert.ok((await page.$$eval('#comparison-table tbody th', (ths) => ths.map((t) => t.textContent))).every((t) => !t.includes('highland')));
  assert.ok(await page.isHidden('#comparison-names'));
  assert.equal(await zone.locator('.code-names').count(), 0);
  assert.ok(await page.isDisabled('#undo-button'), 'the names were the only change');
  assert.equal(await page.inputValue('#terms'), DEMO_TERMS, 'Undo of the names leaves the terms');

  // Named again, and a column left out as an identifier: the session keeps both.
  await zone.locator('button.name-codes').click();
  await inputs.nth(0).fill('coastal');
  await inputs.nth(1).fill('inland');
  await inputs.nth(2).fill('highland');
  await editor.locator('button.use-names').click();
  await afterInspect(() => columnRow('building_age').locator('select').selectOption('identifier'));
  await columnRow('building_age').locator('.by-you').waitFor({ timeout: 10000 });
  assert.equal(await zone.locator('.code-names').textContent(), 'Named: 1 = coastal, 2 = inland, 3 = highland', 'a kind change elsewhere keeps the names');
  const ses = await downloadOf('#session-save');
  const saved = JSON.parse(ses.bytes.toString('utf8'));
  assert.deepEqual(saved.level_names, { climate_zone: { 1: 'coastal', 2: 'inland', 3: 'highland' } });
  assert.deepEqual(saved.excluded_columns, ['building_age']);
  assert.deepEqual(saved.kinds, { building_age: 'identifier' });
  // The report says so among the choices.
  const rep = await downloadOf('#report-button');
  const html = rep.bytes.toString('utf8');
  assert.ok(html.includes(sentence), 'the report has the sentence');
  assert.ok(html.includes('&quot;building_age&quot; was set by you to identifier') || html.includes('"building_age" was set by you to identifier'), 'and the column left out');

  // A fresh page: the same data, then the session: the names and the column left out come back.
  await openFresh();
  await afterFit(() => page.click('#demo-button'));
  assert.equal(await zone.locator('.code-names').count(), 0);
  await afterFit(() => openSessionThroughPage(ses.name, ses.bytes));
  assert.equal(await zone.locator('.code-names').textContent(), 'Named: 1 = coastal, 2 = inland, 3 = highland');
  assert.deepEqual((await coefTableFromPage()).map((r) => r.term), coefNamed.map((r) => r.term), 'the names are back in the table');
  assert.equal(await columnRow('building_age').locator('select').inputValue(), 'identifier');
  assert.equal(await columnRow('building_age').locator('td.actions').textContent(), 'left out: labels rows');
  await page.locator('#case-fields [data-column="climate_zone"]').waitFor({ timeout: 15000 });
  assert.deepEqual(await page.$$eval('#case-fields [data-column="climate_zone"] option', (os) => os.slice(1, 3).map((o) => o.textContent)), ['1 (coastal)', '2 (inland)']);
  // A session that leaves a column out only by excluded_columns leaves it out too; names of a column the data lack are said, not used.
  const other = { ...saved, kinds: {}, excluded_columns: ['occupants'], level_names: { ...saved.level_names, no_such_column: { 1: 'a' } } };
  await afterFit(() => openSessionThroughPage('other.json', Buffer.from(JSON.stringify(other))));
  assert.equal(await columnRow('occupants').locator('select').inputValue(), 'identifier');
  assert.equal(await columnRow('building_age').locator('select').inputValue(), 'numeric');
  assert.match(await page.textContent('#session-notes'), /The session names the codes of "no_such_column", which these data do not have; those names are not used\./);
  assert.equal(await zone.locator('.code-names').textContent(), 'Named: 1 = coastal, 2 = inland, 3 = highland');
  assert.deepEqual(pageErrors, []);
});

/** Presses Tab until the focus is on the element with this id; fails after `most` presses. */
async function tabTo(id, most = 400) {
  for (let i = 0; i < most; i++) {
    if (await page.evaluate((x) => document.activeElement && document.activeElement.id === x, id)) return i;
    await page.keyboard.press('Tab');
  }
  assert.fail(`Tab did not reach #${id} in ${most} presses (the focus is on ${await page.evaluate(() => document.activeElement && (document.activeElement.id || document.activeElement.outerHTML.slice(0, 80)))})`);
}

test('the main path by keyboard alone: demo, search, use the recommended model, predict, formula, session', { timeout: 180000 }, async () => {
  await openFresh();
  await page.evaluate(() => document.activeElement && document.activeElement.blur());
  const drawn = await page.evaluate(() => window.plumblineTest.figuresDrawn());
  await tabTo('demo-button', 20);
  await afterFit(() => page.keyboard.press('Enter'));
  await assertCoefRows(12);
  await checksDrawn(drawn);
  await tabTo('search-button');
  await afterSearch(() => page.keyboard.press('Enter'));
  assert.ok((await page.locator('#comparison-table tbody tr').count()) >= 5, 'the search ran');
  await tabTo('recommend-use', 20);
  await afterFit(() => page.keyboard.press('Enter'));
  await page.waitForFunction(() => document.querySelectorAll('#case-fields [data-column]').length > 0, null, { timeout: 15000 });
  const recommended = await page.inputValue('#terms');
  // The one-case form: every field from the keyboard, Enter predicts.
  await tabTo('case-input-1');
  const n = await page.locator('#case-fields [data-column]').count();
  for (let i = 1; i <= n; i++) {
    assert.equal(await page.evaluate(() => document.activeElement.id), `case-input-${i}`, 'Tab goes through the form in order');
    if (await page.evaluate(() => document.activeElement.tagName === 'SELECT')) await page.keyboard.press('ArrowDown');
    else await page.keyboard.type('5');
    if (i < n) await page.keyboard.press('Tab');
  }
  await afterPredict(() => page.keyboard.press('Enter'));
  assert.equal((await predictionsFromPage()).length, 1, 'the case is predicted');
  assert.ok(await page.isHidden('#predict-message'), await page.textContent('#predict-message'));
  await tabTo('formula-button');
  await page.keyboard.press('Enter');
  await page.waitForFunction(() => document.getElementById('formula-text').value.startsWith('='), null, { timeout: 10000 });
  await tabTo('session-save', 30);
  const [dl] = await Promise.all([page.waitForEvent('download', { timeout: 20000 }), page.keyboard.press('Enter')]);
  assert.equal(dl.suggestedFilename(), 'building-energy-session.json');
  assert.equal(await page.inputValue('#terms'), recommended);
  await shot('30-keyboard-path');
});

test('every control has an accessible name in the browser\'s accessibility tree, and numbers are shown rounded', { timeout: 60000 }, async () => {
  // Still on the page of the keyboard walk: every step is shown.
  for (const id of ['data-summary', 'columns-body', 'result', 'choose-result', 'checks-body', 'predict', 'predict-result', 'keep', 'formula-out']) {
    assert.ok(await page.isVisible(`#${id}`), `#${id} is shown`);
  }
  const cdp = await context.newCDPSession(page);
  const { nodes } = await cdp.send('Accessibility.getFullAXTree');
  await cdp.detach();
  const controls = new Set(['button', 'textbox', 'combobox', 'checkbox', 'spinbutton', 'listbox', 'radio', 'slider', 'searchbox', 'link']);
  const named = [];
  const unnamed = [];
  for (const node of nodes) {
    const role = node.role && node.role.value;
    if (node.ignored || !controls.has(role)) continue;
    const name = node.name && typeof node.name.value === 'string' ? node.name.value.trim() : '';
    (name ? named : unnamed).push(`${role} "${name}"`);
  }
  assert.deepEqual(unnamed, [], 'controls without an accessible name');
  assert.ok(named.length >= 60, `every step's controls are in the tree (${named.length})`);
  for (const name of ['button "Open the demo data"', 'button "Predict this case"', 'button "Write the formula"', 'button "Save the session"',
    'button "Download the report (.html)"', 'button "Copy predictions"', 'button "Copy the comparison"']) {
    assert.ok(named.includes(name), `${name} is in the tree`);
  }
  assert.ok(named.some((x) => /^button "Open a session file/.test(x)), `the session file input is named (${named.filter((x) => /session/i.test(x)).join(', ')})`);
  assert.ok(named.some((x) => /^combobox "hvac_type"|^combobox "climate_zone"/.test(x)) || named.some((x) => /^spinbutton "floor_area_m2"/.test(x)), 'the one-case fields are named by their columns');
  // The DOM's own view agrees: every input, select, textarea and button is labelled.
  const unlabelled = await page.$$eval('input, select, textarea, button', (els) => els
    .filter((e) => !(e.labels && e.labels.length) && !e.getAttribute('aria-label') && !e.getAttribute('aria-labelledby') && !e.textContent.trim())
    .map((e) => e.id || e.outerHTML.slice(0, 60)));
  assert.deepEqual(unlabelled, []);

  // Numbers are rounded for reading (at most 6 significant digits) and kept in full.
  const cells = await page.$$eval('#coef-table td.num, #predictions-table td.num, #comparison-table td.num[data-full]', (tds) => tds.map((td) => [td.textContent, td.dataset.full]));
  assert.ok(cells.length > 50, `numbers checked (${cells.length})`);
  for (const [shown, f] of cells) {
    if (f === '' || f === undefined || !Number.isFinite(Number(f))) continue;
    const mantissa = shown.replace(/^-/, '').replace(/e.*$/, '').replace('.', '').replace(/^0+/, '');
    assert.ok(mantissa.length <= 6 || /^\d+$/.test(shown.replace(/^-/, '')), `${shown} is rounded (full ${f})`);
    // Half a unit of the last digit shown.
    const [mant, exp = '0'] = shown.split('e');
    const decimals = mant.includes('.') ? mant.split('.')[1].length : 0;
    const half = 0.5 * 10 ** (Number(exp) - decimals);
    assert.ok(Math.abs(Number(shown) - Number(f)) <= half * (1 + 1e-9), `${shown} rounds ${f}`);
  }
});

test('readable at 1366×768 and 1920×1080: no sideways scrolling, each step in view', { timeout: 60000 }, async () => {
  for (const [w, h] of [[1366, 768], [1920, 1080]]) {
    await page.setViewportSize({ width: w, height: h });
    await page.evaluate(() => window.scrollTo(0, 0));
    const overflow = await page.evaluate(() => document.documentElement.scrollWidth - window.innerWidth);
    assert.ok(overflow <= 0, `no sideways scrolling at ${w}×${h} (${overflow}px)`);
    for (const id of ['predict', 'keep']) {
      const box = await page.locator(`#${id}`).boundingBox();
      assert.ok(box.width <= w, `#${id} fits across at ${w} px`);
      await page.locator(`#${id}`).screenshot({ path: join(shots, `31-${id}-${w}x${h}.png`) });
    }
    await page.screenshot({ path: join(shots, `32-whole-page-${w}x${h}.png`), fullPage: true });
  }
  await page.setViewportSize({ width: 1366, height: 768 });
});

test('a whole session, from the demo to predictions, asks for nothing, stores nothing and uses no eval', { timeout: 120000 }, async () => {
  const requestsBefore = requests.length;
  const routedBefore = routed.length;
  await openFresh();
  const drawn = await page.evaluate(() => window.plumblineTest.figuresDrawn());
  await afterFit(() => page.click('#demo-button'));
  await assertCoefRows(12);
  await checksDrawn(drawn);
  await afterSearch(() => page.click('#search-button'));
  assert.ok((await page.locator('#comparison-table tbody tr').count()) >= 5);
  await afterFit(() => page.click('#recommend-use'));
  await caseFormOfThisFit();
  for (const f of await page.$$('#case-fields [data-column]')) {
    if (await f.evaluate((e) => e.tagName === 'SELECT')) await f.selectOption({ index: 1 });
    else await f.fill('3');
  }
  await afterPredict(() => page.click('#case-button'));
  assert.equal((await predictionsFromPage()).length, 1);
  await afterPredict(() => page.setInputFiles('#cases-file', { name: 'new-cases.csv', mimeType: 'text/csv', buffer: Buffer.from(NEW_CASES_CSV) }));
  assert.equal((await predictionsFromPage()).length, 5);
  await context.grantPermissions(['clipboard-read', 'clipboard-write']);
  await page.click('#copy-button');
  await page.click('#copy-predictions');
  await page.locator('#copy-predictions-status').filter({ hasText: 'Copied' }).waitFor({ timeout: 5000 });
  await page.click('#copy-candidates');
  await page.locator('#copy-candidates-status').filter({ hasText: 'Copied' }).waitFor({ timeout: 5000 });
  // Every export, too: the formula, the files and the session (downloads are blob: URLs inside the page).
  await page.click('#formula-button');
  await page.waitForFunction(() => document.getElementById('formula-text').value.startsWith('='), null, { timeout: 10000 });
  await downloadOf('#workbook-button');
  await downloadOf('#report-button');
  await page.check('#session-data');
  const ses = await downloadOf('#session-save');
  await afterFit(() => openSessionThroughPage('session.json', ses.bytes));
  await assertWatchClean('a whole session');
  const asked = requests.slice(requestsBefore).filter((u) => u.split('#')[0] !== pageUrl);
  assert.deepEqual(asked, [], 'no request but the page');
  assert.deepEqual(routed.slice(routedBefore).filter((u) => u.split('#')[0] !== pageUrl), [], 'nothing but the page reached the network layer');
  assert.deepEqual(pageErrors, []);
});

test('over the whole session, nothing was requested but the page', { timeout: 10000 }, async () => {
  await assertWatchClean('the last page of the session');
  assert.deepEqual(refused, [], 'nothing but the page reached the network layer');
  assert.ok(routed.length >= 1 && routed.every((u) => u.split('#')[0] === pageUrl), `only the page was loaded (${routed.length} loads)`);
  const foreign = foreignRequests();
  console.log(`  requests: ${requests.length} of the page itself, ${foreign.length} other; data: URLs seen as requests: ${dataRequests.length}; workers started: ${workers.length}`);
  assert.deepEqual(foreign, []);
  assert.ok(requests.length >= 1);
  assert.deepEqual(dialogs, []);
  assert.deepEqual(pageErrors, [], 'no uncaught script error in the page');
});

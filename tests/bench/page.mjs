// Times the built page, dist/plumbline.html opened from disk in headless
// Chromium. Uses playwright-core from www/node_modules, as the browser
// tests do.
//
//   node tests/bench/page.mjs [REPEATS]
//     how long the demo's first result takes: from the start of navigation
//     to #demo until the coefficient table has rows. Prints
//     {"seconds": [each run], "best": ..., "median": ...}; a fresh browser
//     context per run, so nothing is cached between runs.
//   node tests/bench/page.mjs load FILE
//     how long opening FILE takes: once the demo has shown its result (the
//     worker is up), from choosing the file in the Data step until the page
//     names it as the data open (read by the page, copied to the worker,
//     read and profiled there). Prints the same JSON, of the one run.
import { createRequire } from 'node:module';
import { existsSync } from 'node:fs';
import { resolve, dirname } from 'node:path';
import { fileURLToPath, pathToFileURL } from 'node:url';

const root = resolve(dirname(fileURLToPath(import.meta.url)), '..', '..');
const require = createRequire(resolve(root, 'www', 'package.json'));
const { chromium } = require('playwright-core');
const page = resolve(root, 'dist', 'plumbline.html');
if (!existsSync(page)) {
  console.error('dist/plumbline.html is missing; run bash www/build.sh');
  process.exit(1);
}
const loadFile = process.argv[2] === 'load' ? resolve(process.argv[3]) : null;
const repeats = loadFile ? 1 : Number(process.argv[2] ?? '5');
const browser = await chromium.launch({
  executablePath: process.env.CHROMIUM ?? '/usr/bin/chromium',
  headless: true,
  args: ['--no-sandbox', '--disable-gpu', '--disable-quic', '--no-first-run', '--disable-background-networking',
    '--disable-component-update', '--disable-sync'],
});
const times = [];
try {
  for (let i = 0; i < repeats; i++) {
    const context = await browser.newContext({ viewport: { width: 1366, height: 768 } });
    const p = await context.newPage();
    await p.goto(`${pathToFileURL(page).href}#demo`);
    await p.waitForFunction(
      () => window.plumblineTest && window.plumblineTest.fitsDone() > 0 && document.querySelectorAll('#coef-table tbody tr').length > 0,
      null,
      { timeout: 30000, polling: 'raf' },
    );
    if (loadFile) {
      const name = loadFile.split('/').pop();
      const start = Date.now();
      await p.setInputFiles('#file-input', loadFile);
      await p.waitForFunction((n) => document.getElementById('data-facts').textContent.startsWith(`${n}:`), name, { timeout: 600000, polling: 100 });
      times.push((Date.now() - start) / 1000);
    } else {
      // performance.now() counts from the start of navigation.
      times.push((await p.evaluate(() => performance.now())) / 1000);
    }
    await context.close();
  }
} finally {
  await browser.close();
}
const sorted = [...times].sort((a, b) => a - b);
console.log(JSON.stringify({ seconds: times, best: sorted[0], median: sorted[Math.floor(sorted.length / 2)] }));

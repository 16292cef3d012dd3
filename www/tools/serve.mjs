// A tiny static server for dist/, on 127.0.0.1 only. No dependencies.
//   PORT=8080 node www/tools/serve.mjs
// Serves only regular files under dist/; a path that leaves dist/ (by
// "..", an encoded slash or a symlink) is refused.
import { createServer } from 'node:http';
import { realpathSync, statSync, createReadStream } from 'node:fs';
import { dirname, extname, join, resolve, sep } from 'node:path';
import { fileURLToPath } from 'node:url';

const here = dirname(fileURLToPath(import.meta.url));
const dist = resolve(here, '..', '..', 'dist');
const port = Number(process.env.PORT || 8080);
const host = '127.0.0.1';

let distReal;
try {
  distReal = realpathSync(dist);
} catch {
  console.error(`serve.mjs: ${dist} does not exist; run www/build.sh first`);
  process.exit(1);
}

const TYPES = {
  '.html': 'text/html; charset=utf-8',
  '.js': 'text/javascript; charset=utf-8',
  '.mjs': 'text/javascript; charset=utf-8',
  '.css': 'text/css; charset=utf-8',
  '.wasm': 'application/wasm',
  '.csv': 'text/csv; charset=utf-8',
  '.json': 'application/json',
  '.png': 'image/png',
  '.svg': 'image/svg+xml',
};

function refuse(res, code, text) {
  res.writeHead(code, { 'Content-Type': 'text/plain; charset=utf-8' });
  res.end(`${text}\n`);
}

/** The real path of a file under dist/ for a URL path, or null. */
function resolvePath(urlPath) {
  let decoded;
  try {
    decoded = decodeURIComponent(urlPath);
  } catch {
    return null;
  }
  if (decoded.includes('\0') || decoded.includes('\\')) return null;
  const parts = decoded.split('/').filter((p) => p !== '');
  if (parts.some((p) => p === '..' || p === '.')) return null;
  if (parts.length === 0) parts.push('plumbline.html');
  const candidate = join(distReal, ...parts);
  let real;
  try {
    real = realpathSync(candidate);
  } catch {
    return null;
  }
  if (real !== distReal && !real.startsWith(distReal + sep)) return null;
  try {
    if (!statSync(real).isFile()) return null;
  } catch {
    return null;
  }
  return real;
}

const server = createServer((req, res) => {
  if (req.method !== 'GET' && req.method !== 'HEAD') return refuse(res, 405, 'Only GET and HEAD');
  const urlPath = (req.url || '/').split('?')[0].split('#')[0];
  const file = resolvePath(urlPath);
  if (!file) return refuse(res, 404, 'Not found');
  res.writeHead(200, {
    'Content-Type': TYPES[extname(file).toLowerCase()] || 'application/octet-stream',
    'Cache-Control': 'no-store',
    'X-Content-Type-Options': 'nosniff',
  });
  if (req.method === 'HEAD') return res.end();
  createReadStream(file).pipe(res);
});

server.listen(port, host, () => {
  console.log(`Serving ${dist}`);
  console.log(`http://${host}:${port}/plumbline.html#demo`);
});

// A tiny static file server for the browser tests: serves <root>/web on
// 127.0.0.1 (port 0 = any free port), with the wasm MIME type, so the tests
// need neither the Rust CLI nor any other server. Every answer carries a
// Content-Security-Policy like the page's own.
// root: process.env.CRITBOX_ROOT, or the repository root.
// Run by hand: `node tests/browser/server.mjs [port]` prints the address.

import http from 'node:http';
import { readFile, stat } from 'node:fs/promises';
import path from 'node:path';
import { fileURLToPath } from 'node:url';

const here = path.dirname(fileURLToPath(import.meta.url));
export const repoRoot = path.resolve(here, '..', '..');

/** Sent with every answer, so workers (which take their policy from their
 * own response, not from the page) run under the same rules as the page:
 * own files only, WebAssembly compilation allowed. */
export const CSP = "default-src 'self'; script-src 'self' 'wasm-unsafe-eval'; worker-src 'self'; "
  + "connect-src 'self'; img-src 'self' data:; style-src 'self'; object-src 'none'; base-uri 'none'";

const TYPES = {
  '.html': 'text/html; charset=utf-8',
  '.js': 'text/javascript; charset=utf-8',
  '.mjs': 'text/javascript; charset=utf-8',
  '.css': 'text/css; charset=utf-8',
  '.json': 'application/json; charset=utf-8',
  '.wasm': 'application/wasm',
  '.png': 'image/png',
  '.svg': 'image/svg+xml',
  '.txt': 'text/plain; charset=utf-8',
};

/**
 * Start serving. Returns {url, server, close()}; url ends with '/'.
 * @param {{root?: string, port?: number}} [opts]
 */
export async function startServer(opts = {}) {
  const root = path.resolve(opts.root || process.env.CRITBOX_ROOT || repoRoot);
  const webRoot = path.join(root, 'web');
  const server = http.createServer(async (req, res) => {
    try {
      if (req.method !== 'GET' && req.method !== 'HEAD') {
        res.writeHead(405, { Allow: 'GET, HEAD' }).end();
        return;
      }
      let rel = decodeURIComponent(new URL(req.url, 'http://x').pathname);
      if (rel.endsWith('/')) rel += 'index.html';
      const file = path.resolve(webRoot, '.' + rel);
      if (file !== webRoot && !file.startsWith(webRoot + path.sep)) {
        res.writeHead(403).end('forbidden');
        return;
      }
      const info = await stat(file).catch(() => null);
      if (!info || !info.isFile()) {
        res.writeHead(404, { 'Content-Type': 'text/plain' }).end(`not found: ${rel}`);
        return;
      }
      const body = await readFile(file);
      res.writeHead(200, {
        'Content-Type': TYPES[path.extname(file).toLowerCase()] || 'application/octet-stream',
        'Content-Length': body.length,
        'Cache-Control': 'no-store',
        'Content-Security-Policy': CSP,
        'X-Content-Type-Options': 'nosniff',
      });
      res.end(req.method === 'HEAD' ? undefined : body);
    } catch (err) {
      res.writeHead(500, { 'Content-Type': 'text/plain' }).end(String(err));
    }
  });
  await new Promise((resolve, reject) => {
    server.once('error', reject);
    server.listen(opts.port ?? 0, '127.0.0.1', resolve);
  });
  const { port } = server.address();
  return {
    url: `http://127.0.0.1:${port}/`,
    server,
    close: () => new Promise((resolve) => server.close(() => resolve())),
  };
}

if (process.argv[1] && path.resolve(process.argv[1]) === fileURLToPath(import.meta.url)) {
  const port = Number(process.argv[2] || 0);
  const { url } = await startServer({ port });
  console.log(`serving ${path.join(process.env.CRITBOX_ROOT || repoRoot, 'web')} at ${url}`);
}

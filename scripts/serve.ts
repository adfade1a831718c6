/**
 * A small static file server for a built release, on the loopback interface only.
 */
import { createServer, type Server } from 'node:http';
import { createReadStream, existsSync, statSync } from 'node:fs';
import { extname, join, normalize, resolve, sep } from 'node:path';

const TYPES: Record<string, string> = {
  '.html': 'text/html; charset=utf-8',
  '.css': 'text/css; charset=utf-8',
  '.js': 'text/javascript; charset=utf-8',
  '.mjs': 'text/javascript; charset=utf-8',
  '.json': 'application/json',
  '.svg': 'image/svg+xml',
  '.png': 'image/png',
  '.csv': 'text/csv; charset=utf-8',
  '.txt': 'text/plain; charset=utf-8',
  '.arrow': 'application/vnd.apache.arrow.file',
  '.parquet': 'application/vnd.apache.parquet',
  '.fits': 'application/fits',
  '.vot': 'application/x-votable+xml',
  '.gz': 'application/gzip',
  '.ico': 'image/x-icon',
  '.wasm': 'application/wasm',
};

/** Serve `root` under the URL prefix `base` (e.g. "/" or "/releases/v1/"). */
export function serveStatic(root: string, opts: { port?: number; host?: string; base?: string } = {}): Promise<{ server: Server; url: string }> {
  const base = (opts.base ?? '/').replace(/\/?$/, '/');
  const rootAbs = resolve(root);
  const server = createServer((req, res) => {
    const url = new URL(req.url ?? '/', 'http://localhost');
    let path = decodeURIComponent(url.pathname);
    if (!path.startsWith(base)) {
      res.writeHead(404).end('not found');
      return;
    }
    path = path.slice(base.length);
    let file = normalize(join(rootAbs, path));
    if (file !== rootAbs && !file.startsWith(rootAbs + sep)) {
      res.writeHead(403).end('forbidden');
      return;
    }
    if (existsSync(file) && statSync(file).isDirectory()) {
      if (!url.pathname.endsWith('/')) {
        res.writeHead(301, { location: url.pathname + '/' + url.search }).end();
        return;
      }
      file = join(file, 'index.html');
    }
    if (!existsSync(file)) {
      const nf = join(rootAbs, '404.html');
      res.writeHead(404, { 'content-type': TYPES['.html'] });
      if (existsSync(nf)) createReadStream(nf).pipe(res);
      else res.end('not found');
      return;
    }
    res.writeHead(200, { 'content-type': TYPES[extname(file)] ?? 'application/octet-stream', 'cache-control': 'no-cache' });
    createReadStream(file).pipe(res);
  });
  return new Promise((ok, fail) => {
    server.once('error', fail);
    server.listen(opts.port ?? 0, opts.host ?? '127.0.0.1', () => {
      const addr = server.address();
      const port = typeof addr === 'object' && addr ? addr.port : 0;
      ok({ server, url: `http://${opts.host ?? '127.0.0.1'}:${port}${base}` });
    });
  });
}

import { createServer, type Server } from 'node:http';
import { readFile, stat } from 'node:fs/promises';
import path from 'node:path';
import { CSP_HEADER } from '../../app/csp.js';

/**
 * A small static server for the built app on 127.0.0.1, sending the same
 * Content-Security-Policy as the page's meta tag. It records every request
 * it answers, so a test can see what the browser fetched.
 */

const TYPES: Record<string, string> = {
  '.html': 'text/html; charset=utf-8', '.js': 'text/javascript; charset=utf-8', '.mjs': 'text/javascript; charset=utf-8',
  '.css': 'text/css; charset=utf-8', '.wasm': 'application/wasm', '.svg': 'image/svg+xml', '.png': 'image/png',
  '.json': 'application/json', '.webmanifest': 'application/manifest+json',
};

export interface TestServer { url: string; requests: string[]; close(): Promise<void> }

export async function serveDist(dir: string, port = 0): Promise<TestServer> {
  const root = path.resolve(dir);
  const requests: string[] = [];
  const server: Server = createServer((req, res) => {
    void (async () => {
      const url = new URL(req.url ?? '/', 'http://127.0.0.1');
      requests.push(url.pathname);
      let file = path.normalize(path.join(root, decodeURIComponent(url.pathname)));
      if (!file.startsWith(root)) { res.writeHead(403).end(); return; }
      try {
        if ((await stat(file)).isDirectory()) file = path.join(file, 'index.html');
        const body = await readFile(file);
        res.writeHead(200, {
          'Content-Type': TYPES[path.extname(file)] ?? 'application/octet-stream',
          'Content-Security-Policy': CSP_HEADER,
          'X-Content-Type-Options': 'nosniff',
          'Cache-Control': path.basename(file) === 'sw.js' || file.endsWith('.html') ? 'no-cache' : 'max-age=3600',
        });
        res.end(body);
      } catch {
        res.writeHead(404, { 'Content-Security-Policy': CSP_HEADER, 'Content-Type': 'text/plain' }).end('not found');
      }
    })();
  });
  await new Promise<void>((resolve) => server.listen(port, '127.0.0.1', resolve));
  const addr = server.address();
  const actual = typeof addr === 'object' && addr ? addr.port : port;
  return {
    url: `http://127.0.0.1:${actual}/`,
    requests,
    close: () => new Promise<void>((resolve) => { server.closeAllConnections(); server.close(() => resolve()); }),
  };
}

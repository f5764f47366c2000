/**
 * The viewer's server: binds to 127.0.0.1 only and serves exactly two things — the built viewer
 * (dist/viewer) and the step files it was given, by number, never by path. Requests whose Host is
 * not this loopback address are refused, so a web page elsewhere cannot reach it by DNS rebinding.
 */
import { createServer, type IncomingMessage, type ServerResponse } from 'node:http';
import { readFileSync, statSync } from 'node:fs';
import { basename, extname, join, normalize, sep } from 'node:path';
import type { DenseLayer } from '../../formats/types.ts';

export interface ServedFile {
  path: string;
  name: string;
}

export interface ServerOptions {
  root: string;
  /** The clip viewer's folder (clip.js, clip.css), served under /clip/ so the viewer can export clip pages. */
  clipRoot?: string;
  files: ServedFile[];
  target: { source: string; id: string; layers: DenseLayer[] } | null;
  port: number;
}

const TYPES: Record<string, string> = {
  '.html': 'text/html; charset=utf-8',
  '.js': 'text/javascript; charset=utf-8',
  '.css': 'text/css; charset=utf-8',
  '.json': 'application/json',
  '.wasm': 'application/wasm',
  '.svg': 'image/svg+xml',
  '.png': 'image/png',
  '.woff2': 'font/woff2',
};

export async function startViewServer(options: ServerOptions): Promise<{ url: string; port: number; close(): Promise<void> }> {
  let port = 0;
  const server = createServer((req, res) => {
    try {
      handle(req, res);
    } catch (e) {
      send(res, 500, 'text/plain; charset=utf-8', `episcope view: ${(e as Error).message}`);
    }
  });

  function handle(req: IncomingMessage, res: ServerResponse) {
    const host = req.headers.host ?? '';
    if (host !== `127.0.0.1:${port}` && host !== `localhost:${port}`) return send(res, 421, 'text/plain', 'this server answers only to 127.0.0.1');
    if (req.method !== 'GET' && req.method !== 'HEAD') return send(res, 405, 'text/plain', 'only GET');
    const url = new URL(req.url ?? '/', `http://${host}`);
    const p = decodeURIComponent(url.pathname);
    if (p === '/api/session') {
      const body = {
        files: options.files.map((f, i) => ({ name: f.name, url: `./api/file/${i}`, size: statSync(f.path).size })),
        target: options.target ? { source: options.target.source, id: options.target.id, url: './api/target' } : null,
      };
      return send(res, 200, TYPES['.json'], JSON.stringify(body));
    }
    const fileMatch = /^\/api\/file\/(\d+)$/.exec(p);
    if (fileMatch) {
      const f = options.files[Number(fileMatch[1])];
      if (!f) return send(res, 404, 'text/plain', 'no such file');
      return send(res, 200, 'application/octet-stream', readFileSync(f.path));
    }
    if ((p === '/clip/clip.js' || p === '/clip/clip.css') && options.clipRoot) {
      const full = join(options.clipRoot, basename(p));
      try {
        return send(res, 200, TYPES[extname(full)], readFileSync(full));
      } catch {
        return send(res, 404, 'text/plain', 'the clip viewer is not built');
      }
    }
    if (p === '/api/target' && options.target) {
      const layers = options.target.layers.map((l) => ({ ...l, weights: Array.from(l.weights), bias: Array.from(l.bias) }));
      return send(res, 200, TYPES['.json'], JSON.stringify({ layers }));
    }
    // The viewer's own files: a normalised path that stays inside the build folder, or nothing.
    const rel = p === '/' ? 'index.html' : p.slice(1);
    const full = normalize(join(options.root, rel));
    if (!full.startsWith(normalize(options.root) + sep) || rel.includes('\0')) return send(res, 404, 'text/plain', 'not found');
    let body: Buffer;
    try {
      if (!statSync(full).isFile()) return send(res, 404, 'text/plain', 'not found');
      body = readFileSync(full);
    } catch {
      return send(res, 404, 'text/plain', 'not found');
    }
    send(res, 200, TYPES[extname(full)] ?? 'application/octet-stream', body);
  }

  await new Promise<void>((resolve, reject) => {
    server.once('error', (e: NodeJS.ErrnoException) =>
      reject(new Error(e.code === 'EADDRINUSE' ? `port ${options.port} on 127.0.0.1 is busy; pass --port P (0 picks a free one)` : e.message)),
    );
    server.listen(options.port, '127.0.0.1', () => resolve());
  });
  const addr = server.address();
  port = typeof addr === 'object' && addr ? addr.port : options.port;
  return {
    url: `http://127.0.0.1:${port}/`,
    port,
    close: () => new Promise<void>((resolve) => server.close(() => resolve())),
  };
}

function send(res: ServerResponse, status: number, type: string, body: string | Buffer) {
  res.writeHead(status, {
    'content-type': type,
    'cache-control': 'no-store',
    'x-content-type-options': 'nosniff',
    // The page needs nothing from elsewhere; say so, so a stray reference fails loudly.
    'content-security-policy': "default-src 'self'; style-src 'self' 'unsafe-inline'; worker-src 'self' blob:; img-src 'self' data: blob:",
  });
  res.end(body);
}

export const servedName = (path: string) => basename(path);

/**
 * The built viewer that `episcope view` serves: dist/viewer, rebuilt with Vite when it is missing
 * or older than any source it is made from, so `npm start` works straight after `npm ci`.
 */
import { existsSync, readdirSync, statSync } from 'node:fs';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';

export const PROJECT = fileURLToPath(new URL('../..', import.meta.url));
export const VIEWER_DIST = join(PROJECT, 'dist', 'viewer');

function newest(dir: string): number {
  let t = 0;
  for (const e of readdirSync(dir, { withFileTypes: true })) {
    const p = join(dir, e.name);
    t = Math.max(t, e.isDirectory() ? newest(p) : statSync(p).mtimeMs);
  }
  return t;
}

export function viewerIsStale(): boolean {
  const index = join(VIEWER_DIST, 'index.html');
  if (!existsSync(index)) return true;
  const built = statSync(index).mtimeMs;
  return ['viewer', 'src', 'formats'].some((d) => newest(join(PROJECT, d)) > built);
}

export async function ensureViewerBuilt(log: (line: string) => void): Promise<void> {
  if (!viewerIsStale()) return;
  log('episcope view: building the viewer (once, about 10 s)…');
  const { build } = await import('vite');
  await build({ configFile: join(PROJECT, 'vite.config.ts'), logLevel: 'warn' });
}

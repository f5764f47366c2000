/**
 * The built viewer that `episcope view` serves: dist/viewer, rebuilt with Vite when it is missing
 * or older than any source it is made from, so `npm start` works straight after `npm ci`.
 */
import { existsSync, readdirSync, renameSync, rmSync, statSync } from 'node:fs';
import { dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';

export const PROJECT = fileURLToPath(new URL('../..', import.meta.url));
export const VIEWER_DIST = join(PROJECT, 'dist', 'viewer');
/** The single-file viewer a clip page carries (`vite build --mode clip`). */
export const CLIP_DIST = join(PROJECT, 'dist', 'clip');

function newest(dir: string): number {
  let t = 0;
  for (const e of readdirSync(dir, { withFileTypes: true })) {
    const p = join(dir, e.name);
    t = Math.max(t, e.isDirectory() ? newest(p) : statSync(p).mtimeMs);
  }
  return t;
}

/** A build is stale when its marker file is missing or older than any source it is made from. */
export function isStale(marker: string): boolean {
  if (!existsSync(marker)) return true;
  const built = statSync(marker).mtimeMs;
  return ['viewer', 'src', 'formats'].some((d) => newest(join(PROJECT, d)) > built) || statSync(join(PROJECT, 'vite.config.ts')).mtimeMs > built;
}

/**
 * Build into a folder of its own, then swap it in whole: two processes that build at once (two
 * test files, or a test and a user) never see a half-emptied build.
 */
async function buildIfStale(marker: string, mode: string, what: string, log: (line: string) => void): Promise<void> {
  if (!isStale(marker)) return;
  log(`episcope: building the ${what} (once, a few seconds)…`);
  const dest = dirname(marker);
  const fresh = `${dest}.building-${process.pid}`;
  const old = `${dest}.old-${process.pid}`;
  const { build } = await import('vite');
  await build({ configFile: join(PROJECT, 'vite.config.ts'), mode, logLevel: 'warn', build: { outDir: fresh, emptyOutDir: true } });
  if (existsSync(dest)) renameSync(dest, old);
  try {
    renameSync(fresh, dest);
  } catch (e) {
    // Another process put its own fresh build in place between the two renames: keep that one.
    if (!existsSync(dest)) throw e;
    rmSync(fresh, { recursive: true, force: true });
  }
  rmSync(old, { recursive: true, force: true });
}

export function ensureViewerBuilt(log: (line: string) => void): Promise<void> {
  return buildIfStale(join(VIEWER_DIST, 'index.html'), 'production', 'viewer', log);
}

export function ensureClipBuilt(log: (line: string) => void): Promise<void> {
  return buildIfStale(join(CLIP_DIST, 'clip.js'), 'clip', 'clip viewer', log);
}

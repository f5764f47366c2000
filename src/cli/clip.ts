/**
 * `episcope clip FILE --episode E --from A --to B [--context K] [--target SNAP] [--title T]
 *  [--note TEXT] (-o OUT.steps | --page OUT.html)`: a short segment to share. The source is only
 * read; outputs are written to a temporary name and renamed when whole.
 */
import { existsSync, readFileSync, renameSync, rmSync, writeFileSync } from 'node:fs';
import { basename, join, resolve } from 'node:path';
import { StepFileError } from '../../formats/errors.ts';
import type { Snapshot } from '../../formats/types.ts';
import { ClipError, writeClip } from '../clip/clip.ts';
import { clipPageHtml } from '../clip/page.ts';
import { checkSnapshotFits, loadSnapshotSpec } from '../net/index.ts';
import { MemorySink } from '../record/memory-sink.ts';
import { UsageError, intFlag, parse } from './args.ts';
import type { CommandIO } from './io.ts';
import { openForCommand } from './open.ts';
import { clipUsage } from './usage.ts';
import { CLIP_DIST, ensureClipBuilt } from './viewer-build.ts';

export async function clipCommand(argv: string[], io: CommandIO): Promise<void> {
  const { values, positionals } = parse(
    'clip',
    argv,
    {
      episode: { type: 'string' },
      from: { type: 'string' },
      to: { type: 'string' },
      context: { type: 'string' },
      target: { type: 'string' },
      title: { type: 'string' },
      note: { type: 'string' },
      out: { type: 'string', short: 'o' },
      page: { type: 'string' },
      force: { type: 'boolean' },
    },
    { min: 1, max: 1, names: 'a step file: ' + clipUsage },
  );
  const need = (name: string) => {
    const v = intFlag('clip', values, name);
    if (v === undefined) throw new UsageError(`episcope clip: --${name} is required (${clipUsage})`);
    return v;
  };
  const episode = need('episode');
  const from = need('from');
  const to = need('to');
  const context = intFlag('clip', values, 'context', 0, 10_000);
  const out = values.out === undefined ? null : String(values.out);
  const page = values.page === undefined ? null : String(values.page);
  if (!out && !page) throw new UsageError('episcope clip: say where to write it: -o OUT.steps and/or --page OUT.html');
  const sourcePath = positionals[0];
  for (const dest of [out, page]) {
    if (!dest) continue;
    if (resolve(dest) === resolve(sourcePath)) throw new UsageError(`episcope clip: ${dest} is the source file; a clip never overwrites its source`);
    if (existsSync(dest) && !values.force) throw new UsageError(`episcope clip: ${dest} already exists; pass --force to replace it`);
  }
  const file = openForCommand('clip', sourcePath);
  try {
    const snapshots: Snapshot[] = [];
    if (values.target !== undefined) {
      try {
        const snap = await loadSnapshotSpec(String(values.target), file);
        checkSnapshotFits(snap.layers, file.header, snap.source);
        snapshots.push({ role: 'target', trainingStep: snap.trainingStep ?? 0, id: snap.id, layers: snap.layers });
      } catch (e) {
        throw new UsageError(`episcope clip: ${(e as Error).message}`);
      }
    }
    const sink = new MemorySink();
    let summary;
    try {
      summary = writeClip(file, { episode, from, to, context, snapshots, title: values.title as string | undefined, note: values.note as string | undefined, sourceName: basename(sourcePath) }, sink);
    } catch (e) {
      if (e instanceof ClipError || e instanceof StepFileError) throw new UsageError(`episcope clip: ${e.message}`);
      throw e;
    }
    const bytes = sink.bytes();
    if (out) writeWhole(out, bytes);
    if (page) {
      await ensureClipBuilt((l) => io.err(l + '\n'));
      const html = clipPageHtml({
        title: String(values.title ?? ''),
        name: out ? basename(out) : `${basename(sourcePath, '.steps')}-ep${episode}-${from}-${to}.steps`,
        clip: bytes,
        appJs: readFileSync(join(CLIP_DIST, 'clip.js'), 'utf8'),
        appCss: readFileSync(join(CLIP_DIST, 'clip.css'), 'utf8'),
      });
      writeWhole(page, html);
    }
    const p = summary.provenance;
    io.out(
      `episcope clip: episode ${p.episode}, steps ${p.from}–${p.to} (+${p.context} for targets, ${summary.steps} steps, ${summary.snapshots} snapshots)` +
        `${out ? ` → ${out} (${bytes.length.toLocaleString('en')} bytes)` : ''}${page ? ` → ${page}` : ''}\n`,
    );
  } finally {
    file.close();
  }
}

function writeWhole(path: string, data: Uint8Array | string): void {
  const partial = `${path}.partial-${process.pid}`;
  try {
    writeFileSync(partial, data);
    renameSync(partial, path);
  } catch (e) {
    rmSync(partial, { force: true });
    throw new UsageError(`episcope clip: cannot write ${path} (${(e as NodeJS.ErrnoException).code ?? (e as Error).message})`);
  }
}

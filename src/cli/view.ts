/** `episcope view FILE… [--target SNAP] [--port P]`: serve the viewer on 127.0.0.1 with these step files. */
import { existsSync } from 'node:fs';
import { basename } from 'node:path';
import { StepFileError } from '../../formats/errors.ts';
import { openStepFilePath } from '../../formats/node.ts';
import { checkSnapshotFits, loadSnapshotSpec } from '../net/index.ts';
import { UsageError, intFlag, parse } from './args.ts';
import type { CommandIO } from './io.ts';
import { viewUsage } from './usage.ts';
import { CLIP_DIST, VIEWER_DIST, ensureClipBuilt, ensureViewerBuilt } from './viewer-build.ts';
import { startViewServer } from './view-server.ts';

export async function viewCommand(argv: string[], io: CommandIO): Promise<void> {
  const { values, positionals } = parse('view', argv, { target: { type: 'string' }, port: { type: 'string' } }, { min: 1, max: Infinity, names: 'a step file: ' + viewUsage });
  const port = intFlag('view', values, 'port', 0, 65535) ?? 7357;
  // Every file must open before anything is served: a bad name fails here, with its reason.
  const opened = positionals.map((path) => {
    if (!existsSync(path)) throw new UsageError(`episcope view: ${path}: no such file`);
    try {
      const f = openStepFilePath(path);
      return { path, file: f };
    } catch (e) {
      if (e instanceof StepFileError) throw new UsageError(`episcope view: ${e.message}`);
      throw e;
    }
  });
  let target = null;
  if (values.target !== undefined) {
    try {
      const snap = await loadSnapshotSpec(String(values.target), opened[0].file);
      checkSnapshotFits(snap.layers, opened[0].file.header, snap.source);
      target = { source: snap.source, id: snap.id, layers: snap.layers };
    } catch (e) {
      throw new UsageError(`episcope view: ${(e as Error).message}`);
    }
  }
  for (const o of opened) o.file.close();
  const names = new Set<string>();
  const files = opened.map((o) => {
    let name = basename(o.path);
    for (let i = 2; names.has(name); i++) name = `${basename(o.path, '.steps')}-${i}.steps`;
    names.add(name);
    return { path: o.path, name };
  });
  await ensureViewerBuilt((l) => io.err(l + '\n'));
  await ensureClipBuilt((l) => io.err(l + '\n'));
  const server = await startViewServer({ root: VIEWER_DIST, clipRoot: CLIP_DIST, files, target, port });
  io.out(`episcope view: ${files.map((f) => f.name).join(', ')} at ${server.url}  (loopback only; Ctrl+C stops)\n`);
  // Serve until the process is stopped.
  await new Promise<void>((resolve) => {
    process.once('SIGINT', resolve);
    process.once('SIGTERM', resolve);
  });
  await server.close();
}

/**
 * Turns a user's SNAP argument into a network: a snapshot out of a step file, or a TensorFlow.js
 * layers-model folder. The forms:
 *
 *   FILE.steps            the last target snapshot in the file (the last of any role if it has none)
 *   FILE.steps#target     the last target snapshot; #online likewise
 *   FILE.steps#1a2b3c4d   the last record with that id, or with the one id that starts with those
 *                         ≥ 4 hex digits (one id can be recorded as online and as target)
 *   FILE.steps#step=N     the last target snapshot at or before training step N (not the nearest
 *                         after it: a TD target at step N cannot have used later weights). When a
 *                         recorder synced the target without storing each copy, this is the last
 *                         stored one; the step blocks' weight runs name the id truly in force.
 *   #target, #step=N, …   the same, in the recording already open
 *   FOLDER                a folder holding model.json (see model-folder.ts)
 *
 * "Last" means the greatest training step, and among equal training steps the later record.
 */
import { existsSync, statSync } from 'node:fs';
import { basename, dirname, join } from 'node:path';
import type { SnapshotRef } from '../../formats/index-record.ts';
import { openStepFilePath } from '../../formats/node.ts';
import type { StepFile } from '../../formats/reader.ts';
import { snapshotId } from '../../formats/snapshot-id.ts';
import type { DenseLayer, SnapshotRole } from '../../formats/types.ts';
import { folderContents, loadModelFolder } from './model-folder.ts';
import { idClash, MIN_ID_PREFIX, pickSnapshot } from './pick.ts';

export { checkSnapshotFits } from './fit.ts';
export { MIN_ID_PREFIX, pickSnapshot, type SnapshotQuery } from './pick.ts';

export interface LoadedSnapshot {
  layers: DenseLayer[];
  /** The snapshot's id; for a model folder, the id its layers would have in a step file. */
  id: string;
  /** null for a model folder. */
  role: SnapshotRole | null;
  trainingStep: number | null;
  /** What was loaded, for people: 'samples/trolley.steps#target (target, training step 1200, id 1a2b…)'. */
  source: string;
}

/** Resolve a SNAP argument; `recording` is the step file already open, for the '#…' forms. */
export async function loadSnapshotSpec(spec: string, recording: StepFile | null): Promise<LoadedSnapshot> {
  if (spec.trim() === '') throw new Error('snapshot: the argument is empty; give FILE.steps, FILE.steps#target, #target or a model folder');
  const { path, fragment } = splitSpec(spec);

  if (path === '') {
    if (!recording) {
      throw new Error(`${spec}: names a snapshot in the recording itself, but no recording is open here; give FILE.steps${spec}`);
    }
    return fromStepFile(recording, `${recording.name}#${fragment}`, fragment);
  }
  if (!existsSync(path)) {
    throw new Error(`${spec}: ${path} does not exist; expected a step file (FILE.steps, FILE.steps#…) or a folder holding model.json`);
  }
  const isFolder = statSync(path).isDirectory();
  const isModelJson = !isFolder && basename(path) === 'model.json';
  if (isFolder || isModelJson) {
    if (fragment !== null) throw new Error(`${spec}: #${fragment} picks a snapshot in a step file, but ${path} is a ${isFolder ? 'folder' : 'model.json'}`);
    const folder = isFolder ? path : dirname(path);
    if (isFolder && !existsSync(join(folder, 'model.json'))) {
      throw new Error(`${spec}: the folder has no model.json; expected a TensorFlow.js layers-model folder or a step file${folderContents(folder)}`);
    }
    const layers = loadModelFolder(folder);
    const id = snapshotId(layers);
    const sizes = [layers[0].inputs, ...layers.map((l) => l.outputs)].join('→');
    return { layers, id, role: null, trainingStep: null, source: `${spec} (TensorFlow.js layers model ${sizes}, id ${id})` };
  }
  const file = openStepFilePath(path);
  try {
    return fromStepFile(file, spec, fragment);
  } finally {
    file.close();
  }
}

/**
 * Split at the last '#', unless the whole argument names something on disk: a file name may
 * itself hold a '#'.
 */
function splitSpec(spec: string): { path: string; fragment: string | null } {
  if (existsSync(spec)) return { path: spec, fragment: null };
  const at = spec.lastIndexOf('#');
  if (at < 0) return { path: spec, fragment: null };
  return { path: spec.slice(0, at), fragment: spec.slice(at + 1) };
}

function fromStepFile(file: StepFile, label: string, fragment: string | null): LoadedSnapshot {
  if (file.snapshots.length === 0) throw new Error(`${label}: ${file.name} holds no snapshots`);
  const ref = resolveFragment(file, label, fragment === '' ? null : fragment);
  const snap = file.readSnapshot(ref);
  return {
    layers: snap.layers,
    id: ref.id,
    role: ref.role,
    trainingStep: ref.trainingStep,
    source: `${label} (${ref.role}, training step ${ref.trainingStep}, id ${ref.id})`,
  };
}

function resolveFragment(file: StepFile, label: string, fragment: string | null): SnapshotRef {
  if (fragment === null) return (pickSnapshot(file, { role: 'target' }) ?? pickSnapshot(file))!;
  if (fragment === 'target' || fragment === 'online') {
    const ref = pickSnapshot(file, { role: fragment });
    if (!ref) throw new Error(`${label}: the file has no ${fragment} snapshot (${overview(file)})`);
    return ref;
  }
  const step = /^step=(\d+)$/.exec(fragment);
  if (step) {
    const n = Number(step[1]);
    if (!Number.isSafeInteger(n)) throw new Error(`${label}: training step ${step[1]} is too large`);
    const ref = pickSnapshot(file, { role: 'target', atOrBeforeStep: n });
    if (!ref) {
      const first = pickFirst(file, 'target');
      throw new Error(`${label}: no target snapshot at or before training step ${n} (${first ? `the earliest is at training step ${first.trainingStep}` : overview(file)})`);
    }
    return ref;
  }
  if (fragment.startsWith('step=')) throw new Error(`${label}: "${fragment.slice(5)}" is not a training step; expected #step=N with N a whole number ≥ 0`);
  if (/^[0-9a-f]+$/i.test(fragment)) {
    if (fragment.length < MIN_ID_PREFIX) throw new Error(`${label}: an id prefix needs at least ${MIN_ID_PREFIX} hex digits, "${fragment}" has ${fragment.length}`);
    const clash = idClash(file, fragment);
    if (clash) throw new Error(`${label}: ${clash}`);
    const ref = pickSnapshot(file, { id: fragment });
    if (!ref) throw new Error(`${label}: no snapshot id starts with "${fragment.toLowerCase()}" (${overview(file)})`);
    return ref;
  }
  throw new Error(`${label}: "#${fragment}" is not a snapshot; expected #target, #online, #step=N or #<id or ≥ ${MIN_ID_PREFIX} hex digits of one>`);
}

function pickFirst(file: StepFile, role: SnapshotRole): SnapshotRef | null {
  let first: SnapshotRef | null = null;
  for (const s of file.snapshots) if (s.role === role && (!first || s.trainingStep < first.trainingStep)) first = s;
  return first;
}

/** "120 snapshots, 62 ids: 62 online, 58 target, training steps 0 to 23001" — what a file offers. */
function overview(file: StepFile): string {
  const all = file.snapshots;
  if (all.length === 0) return 'the file holds no snapshots';
  const online = all.filter((s) => s.role === 'online').length;
  const ids = new Set(all.map((s) => s.id)).size;
  let lo = Infinity;
  let hi = -Infinity;
  for (const s of all) {
    lo = Math.min(lo, s.trainingStep);
    hi = Math.max(hi, s.trainingStep);
  }
  return `the file holds ${all.length} snapshot${all.length === 1 ? '' : 's'} with ${ids} distinct id${ids === 1 ? '' : 's'}: ${online} online, ${all.length - online} target, training steps ${lo} to ${hi}`;
}

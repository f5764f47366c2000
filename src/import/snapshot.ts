/**
 * A TensorFlow.js layers-model folder into a step file that holds a header and one snapshot, so a
 * network trained elsewhere can be the target (or online network) of `episcope td FILE --target
 * OUT.steps`. The header's sizes come from the network: D from its inputs, A from its outputs.
 */
import { basename, resolve } from 'node:path';
import type { SnapshotRole } from '../../formats/types.ts';
import { loadModelFolder } from '../net/model-folder.ts';
import { ImportError } from './errors.ts';
import { checkHeaderNames, importHeader } from './header.ts';
import { checkOutput, writeStepFile } from './output.ts';

export interface SnapshotImportOptions {
  folder: string;
  out: string;
  role: SnapshotRole;
  /** Gradient updates done when the weights were taken (default 0). */
  trainingStep?: number;
  stateDims?: readonly string[] | null;
  actions?: readonly string[] | null;
  gamma?: number | null;
  force?: boolean;
}

export interface SnapshotImportResult {
  out: string;
  id: string;
  /** Layer sizes, "4→64→64→2". */
  sizes: string;
  D: number;
  A: number;
  bytes: number;
  gammaDefaulted: boolean;
}

/** Throws ModelFolderError for a folder it cannot read, ImportError for the rest. */
export async function importSnapshot(o: SnapshotImportOptions): Promise<SnapshotImportResult> {
  if (o.role !== 'online' && o.role !== 'target') throw new ImportError(`--role "${o.role}": expected target or online`);
  const trainingStep = o.trainingStep ?? 0;
  if (!Number.isSafeInteger(trainingStep) || trainingStep < 0) throw new ImportError(`--step ${trainingStep}: expected a whole number of training steps ≥ 0`);
  checkHeaderNames(o);
  checkOutput(o.out, o.force ?? false);
  const layers = loadModelFolder(o.folder);
  const D = layers[0].inputs;
  const A = layers[layers.length - 1].outputs;
  const header = importHeader(
    D,
    A,
    { stateDims: o.stateDims, actions: o.actions, gamma: o.gamma },
    { importedFrom: basename(resolve(o.folder)), format: 'tfjs-layers-model' },
    { state: `the network in ${o.folder} takes ${D} input${D === 1 ? '' : 's'}`, actions: `the network in ${o.folder} gives ${A} Q-value${A === 1 ? '' : 's'}` },
  );
  const { result: id, bytes } = await writeStepFile(o.out, o.force ?? false, header, {}, (recorder) => recorder.snapshot({ role: o.role, trainingStep, layers }));
  return {
    out: o.out,
    id,
    sizes: [D, ...layers.map((l) => l.outputs)].join('→'),
    D,
    A,
    bytes,
    gammaDefaulted: o.gamma === undefined || o.gamma === null,
  };
}

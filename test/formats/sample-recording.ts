/**
 * A small recording with one record of every kind, for the tests that damage files: three
 * episodes of a balancing trolley (5, 1 and 4 steps) in blocks of 3, an online and a target
 * snapshot with equal weights (the second is stored without layers), a note, and an episode end
 * with a final state and Q.
 */
import { openStepFile, type StepFile } from '../../formats/reader.ts';
import { bytesSource } from '../../formats/source.ts';
import type { DenseLayer, Snapshot, StepColumns } from '../../formats/types.ts';
import { createRecorder } from '../../src/record/recorder.ts';
import { MemorySink } from '../../src/record/memory-sink.ts';

export const TROLLEY_HEADER = {
  stateDims: [
    { name: 'position', unit: 'm' },
    { name: 'angle', unit: 'rad' },
  ],
  actions: ['push left', 'coast', 'push right'],
  gamma: 0.99,
  system: { kind: 'cart-pole', title: 'balancing trolley', map: { position: 0, angle: 1 }, params: { railHalfLength: 2.4 } },
  extras: ['tdError'],
  run: { seed: 11, purpose: 'damage tests' },
  createdAt: '2025-01-01T00:00:00.000Z',
};

export const SAMPLE_LAYERS: DenseLayer[] = [
  { inputs: 2, outputs: 2, activation: 'relu', weights: Float32Array.of(0.5, -0.25, 1, 2), bias: Float32Array.of(0.125, 0) },
  { inputs: 2, outputs: 3, activation: 'linear', weights: Float32Array.of(1, 0, -1, 0.5, 0.5, 0.5), bias: Float32Array.of(0, 0, 0.75) },
];

export function recordSample(compress: boolean): Uint8Array {
  const sink = new MemorySink();
  const rec = createRecorder(sink, TROLLEY_HEADER, { blockSize: 3, compress });
  rec.snapshot({ role: 'online', trainingStep: 0, layers: SAMPLE_LAYERS });
  rec.snapshot({ role: 'target', trainingStep: 0, layers: SAMPLE_LAYERS });
  const lengths = [5, 1, 4];
  lengths.forEach((length, episode) => {
    for (let t = 0; t < length; t++) {
      const last = t === length - 1;
      rec.step({
        state: [episode + t / 8, -t / 16],
        action: (episode + t) % 3,
        reward: last && episode === 0 ? -1 : 1,
        q: [t, t + 0.5, -t],
        terminal: last && episode === 0,
        truncated: last && episode === 2,
        explored: t % 2 === 1,
        epsilon: 0.5 - t / 32,
        extras: { tdError: t / 4 },
      });
    }
    if (episode === 1) rec.note({ from: 0, to: 0, text: 'a one-step episode' });
    rec.endEpisode(episode === 2 ? { reason: 'time limit', finalState: [2.5, 0.25], finalQ: [1, 2, 3] } : { failed: episode === 0, reason: episode === 0 ? 'mast fell' : '' });
  });
  rec.close();
  return sink.bytes();
}

export interface EverythingRead {
  blocks: StepColumns[];
  snapshots: Snapshot[];
}

/** Read every block and snapshot the file lists (throws whatever the reader throws). */
export function readEverything(file: StepFile): EverythingRead {
  return {
    blocks: file.blocks.map((_, i) => file.readBlock(i)),
    snapshots: file.snapshots.map((ref) => file.readSnapshot(ref)),
  };
}

export const openBytes = (bytes: Uint8Array, name = 'sample.steps'): StepFile => openStepFile(bytesSource(bytes), name);

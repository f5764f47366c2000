/**
 * Small step files recorded in memory for the analysis tests, so every value a test expects is one
 * it put there itself.
 */
import { openStepFile, type StepFile } from '../../formats/reader.ts';
import { bytesSource } from '../../formats/source.ts';
import type { DenseLayer } from '../../formats/types.ts';
import { MemorySink } from '../../src/record/memory-sink.ts';
import { createRecorder, type RecorderHeader } from '../../src/record/recorder.ts';
import type { Recorder } from '../../src/record/types.ts';

export function trolleyHeader(gamma: number, actions = ['push left', 'coast', 'push right']): RecorderHeader {
  return {
    stateDims: [
      { name: 'position', unit: 'm' },
      { name: 'angle', unit: 'rad' },
    ],
    actions,
    gamma,
    system: { kind: 'cart-pole', title: 'balancing trolley', map: { position: 0, angle: 1 } },
    createdAt: '2025-01-01T00:00:00.000Z',
  };
}

/** Record with `write`, close, and open the bytes again the way a reader would. */
export function recordInMemory(header: RecorderHeader, blockSize: number, write: (rec: Recorder) => void): StepFile {
  const sink = new MemorySink();
  const rec = createRecorder(sink, header, { blockSize });
  write(rec);
  rec.close();
  return openStepFile(bytesSource(sink.bytes()), 'analysis-test.steps');
}

/** One linear layer from 2 state dimensions to `actions` Q-values whose bias makes its id unique to `tag`. */
export function taggedLayers(tag: number, actions = 3): DenseLayer[] {
  return [{ inputs: 2, outputs: actions, activation: 'linear', weights: new Float32Array(2 * actions), bias: new Float32Array(actions).fill(tag) }];
}

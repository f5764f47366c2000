/**
 * The analysis worker's engine: the numbers it sends are the library's, and an episode's series
 * and the whole file's suspects share one forward pass of the target network per episode.
 */
import { beforeEach, describe, expect, it, vi } from 'vitest';
import { analyseFile } from '../../src/analysis/analyse.ts';
import { episodeSeries } from '../../src/analysis/series.ts';
import type { TdOptions } from '../../src/analysis/td.ts';
import { MemorySink } from '../../src/record/memory-sink.ts';
import { createRecorder } from '../../src/record/recorder.ts';
import { openStepFile } from '../../formats/reader.ts';
import { bytesSource } from '../../formats/source.ts';
import type { DenseLayer } from '../../formats/types.ts';
import { AnalysisEngine } from '../../viewer/worker/engine.ts';
import { trolleyHeader } from '../analysis/recording.ts';
import { denseQ } from '../analysis/dense.ts';

// The engine's forward pass, watched: every call is counted with the number of states it was given.
const forwardCalls = vi.hoisted(() => [] as number[]);
vi.mock('../../src/net/forward.ts', async (importOriginal) => {
  const real = await importOriginal<typeof import('../../src/net/forward.ts')>();
  return {
    ...real,
    forwardDense: (layers: DenseLayer[], states: Float32Array, n: number) => {
      forwardCalls.push(n);
      return real.forwardDense(layers, states, n);
    },
  };
});

const A = 3;
const net = (scale: number): DenseLayer[] => [
  { inputs: 2, outputs: 4, activation: 'relu', weights: Float32Array.from([1, -1, 0.5, 2, -0.5, 1, 1, -1].map((w) => w * scale)), bias: new Float32Array([0.1, 0, -0.1, 0.2]) },
  { inputs: 4, outputs: A, activation: 'linear', weights: Float32Array.from({ length: 4 * A }, (_, i) => ((i % 5) - 2) * 0.3), bias: new Float32Array([1, 0, -1]) },
];
const LENGTHS = [30, 12, 25];
const td: TdOptions = { rule: 'dqn', gamma: 0.9, n: 3, truncation: 'bootstrap' };

/** Three episodes under one stored target snapshot; the last one fails with Q far above the bound. */
function recording(): Uint8Array {
  const sink = new MemorySink();
  const rec = createRecorder(sink, trolleyHeader(0.9), { blockSize: 8 });
  rec.snapshot({ role: 'target', trainingStep: 0, layers: net(1) });
  LENGTHS.forEach((length, episode) => {
    for (let t = 0; t < length; t++) {
      const x = Math.sin(t + episode);
      const high = episode === 2 ? 50 + t : 0;
      rec.step({ state: [x, 0.1 * t], action: t % A, reward: t === length - 1 && episode === 2 ? -1 : 0.1, q: [x + high, -x, 0.5], terminal: episode === 2 && t === length - 1, truncated: episode !== 2 && t === length - 1 });
    }
    rec.endEpisode(episode === 2 ? { mode: 'train', failed: true, reason: 'mast fell', finalState: [0, 0] } : { mode: 'train', finalState: [0.5, 0.5] });
  });
  rec.close();
  return sink.bytes();
}

describe('the analysis engine', () => {
  const bytes = recording();
  const file = openStepFile(bytesSource(bytes), 'engine-test.steps');
  let engine: AnalysisEngine;

  beforeEach(() => {
    forwardCalls.length = 0;
    engine = new AnalysisEngine();
    engine.open('0:engine-test.steps', 'engine-test.steps', bytes);
  });

  it('sends the library’s TD series and suspects, against the target in force', () => {
    const series = engine.series('0:engine-test.steps', 2, { kind: 'in-force' }, td);
    const expected = episodeSeries(file.readEpisode(2), file.header, { target: denseQ(net(1)), td }).td!;
    expect(Array.from(series.td!.delta)).toEqual(Array.from(expected.delta));
    const analysis = engine.analyse('0:engine-test.steps', { kind: 'in-force' }, td);
    const reference = analyseFile(file, { target: denseQ(net(1)), td });
    expect(analysis.suspects).toEqual(reference.suspects);
    expect(analysis.episodes).toEqual(reference.episodes);
    expect(analysis.suspects.length).toBeGreaterThan(0);
  });

  it('runs the target network once per episode for the series and the suspects together', () => {
    engine.series('0:engine-test.steps', 2, { kind: 'in-force' }, td);
    expect(forwardCalls).toEqual([LENGTHS[2]]);
    engine.analyse('0:engine-test.steps', { kind: 'in-force' }, td);
    // Episode 2's pass is reused; the other two are new.
    expect([...forwardCalls].sort((a, b) => a - b)).toEqual([LENGTHS[2], ...LENGTHS.slice(0, 2)].sort((a, b) => a - b));
    // Another rule needs the same target values: no pass at all.
    engine.series('0:engine-test.steps', 0, { kind: 'in-force' }, { ...td, rule: 'nstep' });
    engine.analyse('0:engine-test.steps', { kind: 'in-force' }, { ...td, rule: 'double' });
    expect(forwardCalls.length).toBe(3);
  });

  it('tells two networks with the same id apart by their weights', () => {
    const first = engine.series('0:engine-test.steps', 1, { kind: 'net', net: { source: 'a', id: 'model', layers: net(1) } }, td);
    const second = engine.series('0:engine-test.steps', 1, { kind: 'net', net: { source: 'b', id: 'model', layers: net(-2) } }, td);
    expect(forwardCalls).toEqual([LENGTHS[1], LENGTHS[1]]);
    const expected = episodeSeries(file.readEpisode(1), file.header, { target: denseQ(net(-2)), td }).td!;
    expect(Array.from(second.td!.target)).toEqual(Array.from(expected.target));
    expect(Array.from(second.td!.target)).not.toEqual(Array.from(first.td!.target));
  });
});

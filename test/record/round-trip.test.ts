import { decode } from '@msgpack/msgpack';
import { describe, expect, it } from 'vitest';
import { openStepFile } from '../../formats/reader.ts';
import { snapshotId } from '../../formats/snapshot-id.ts';
import { bytesSource } from '../../formats/source.ts';
import { ACTIVATIONS, type Activation, type DenseLayer } from '../../formats/types.ts';
import { createRecorder } from '../../src/record/recorder.ts';
import { MemorySink } from '../../src/record/memory-sink.ts';
import { KIND, walkFrames } from '../formats/frames.ts';
import { seededRandom } from '../formats/seeded-bytes.ts';
import { MirroredRecording, bitsOf, expectedBlocks, expectedColumns, rawBitsOf, weightRuns } from './mirror.ts';

const f32 = Math.fround;
const open = (bytes: Uint8Array) => openStepFile(bytesSource(bytes), 'round-trip.steps');
const f32FromBits = (bits: number) => new Float32Array(Uint32Array.of(bits).buffer)[0];

const QUIET_NAN_WITH_PAYLOAD = 0x7fc00001;
const SMALLEST_SUBNORMAL = 0x00000001;

const TROLLEY_HEADER = {
  stateDims: [
    { name: 'position', unit: 'm' },
    { name: 'velocity', unit: 'm/s' },
    { name: 'angle', unit: 'rad' },
  ],
  actions: ['push left', 'push right'],
  gamma: 0.97,
  system: {
    kind: 'cart-pole',
    title: 'balancing trolley',
    map: { position: 0, velocity: 1, angle: 2 },
    params: { railHalfLength: 2.4, force: 10 },
  },
  extras: ['tdError', 'loss'],
  run: {
    seed: 3,
    net: { hidden: [16, 8], learningRate: 0.0005, optimizer: 'adam' },
    tags: ['trolley', 'night run'],
    replay: { capacity: 10000, warmup: null },
    doubleDqn: true,
    bigCount: 2 ** 40,
  },
  createdAt: '2025-03-04T05:06:07.089Z',
};

/** Every activation the format knows, the linear output layer last. */
const LAYER_ACTIVATIONS: Activation[] = [...ACTIVATIONS.filter((a) => a !== 'linear'), 'linear'];

/** A dense stack D → 4 → … → A that uses every activation the format knows. */
function networkWeights(seed: number, D: number, A: number): DenseLayer[] {
  const random = seededRandom(seed);
  const activations = LAYER_ACTIVATIONS;
  return activations.map((activation, i) => {
    const inputs = i === 0 ? D : 4;
    const outputs = i === activations.length - 1 ? A : 4;
    return {
      inputs,
      outputs,
      activation,
      weights: Float32Array.from({ length: inputs * outputs }, () => f32(random() - 0.5)),
      bias: Float32Array.from({ length: outputs }, () => f32(random() / 8)),
    };
  });
}

/**
 * Four episodes that between them use every field: a terminal episode with a weight change
 * mid-episode, an empty episode, a one-step truncated evaluation, and an episode with mixed ε,
 * sparse extras and non-finite Q and rewards.
 */
function recordTrolleyRun(options: { compress: boolean; blockSize: number }): { m: MirroredRecording; bytes: Uint8Array } {
  const m = new MirroredRecording(TROLLEY_HEADER, options);
  const first = networkWeights(1, 3, 2);
  const second = networkWeights(2, 3, 2);
  m.snapshot({ role: 'online', trainingStep: 0, layers: first });
  m.snapshot({ role: 'target', trainingStep: 0, layers: first }); // same weights: stored without layers

  // Episode 0: 7 steps, ε and both extras on every step; new online weights from step 4.
  for (let t = 0; t < 7; t++) {
    if (t === 4) m.snapshot({ role: 'online', trainingStep: 40, layers: second });
    m.step({
      state: [f32(t * 0.125), f32(-t * 0.5), f32(0.01 * t)],
      action: t % 2,
      reward: t === 6 ? -1 : 0.5,
      q: [f32(1 + t / 4), f32(2 - t / 8)],
      terminal: t === 6,
      explored: t % 3 === 0,
      epsilon: f32(0.9 - t / 100),
      extras: { tdError: f32(t / 16), loss: f32(t * t) },
    });
  }
  m.note({ from: 2, to: 5, text: 'mast starts to tip' });
  m.endEpisode({ failed: true, reason: 'mast fell' });

  // Episode 1: no steps at all.
  m.endEpisode();

  // Episode 2: one truncated greedy step, no ε, no extras.
  m.step({ state: [1, 2, 3], action: 1, reward: 1, q: [0.25, 0.75], truncated: true });
  m.endEpisode({ mode: 'eval', reason: 'time limit', finalState: [1.5, 2.5, 3.5], finalQ: [0.5, 1.5] });

  // Episode 3: ε on some steps only, one extra only, NaN / ±Infinity / −0 / subnormal values.
  const specialQ: [number, number][] = [
    [NaN, 1],
    [Infinity, -Infinity],
    [-0, f32FromBits(SMALLEST_SUBNORMAL)],
    [f32FromBits(QUIET_NAN_WITH_PAYLOAD), 3],
    [4, 5],
  ];
  const specialReward = [NaN, Infinity, -Infinity, 0, 0.25];
  for (let t = 0; t < 5; t++) {
    if (t === 2) m.snapshot({ role: 'target', trainingStep: 80, layers: second, inForce: false });
    if (t === 3) m.snapshot({ role: 'target', trainingStep: 90, layers: second });
    m.step({
      state: [t, -t, 0.5],
      action: (t + 1) % 2,
      reward: specialReward[t],
      q: Float32Array.from(specialQ[t]),
      explored: true,
      ...(t % 2 === 0 ? { epsilon: f32(0.1 * t) } : {}),
      ...(t === 1 || t === 4 ? { extras: { loss: t } } : {}),
    });
  }
  m.note({ episode: 3, from: 1, to: 3, text: '<b>spike</b> — Q ∞, return NaN' });
  m.endEpisode({ outcome: 'ended', finalQ: [7, 8] });
  return { m, bytes: m.close() };
}

describe.each([
  { compress: false, blockSize: 3 },
  { compress: true, blockSize: 3 },
  { compress: false, blockSize: 4096 },
  { compress: true, blockSize: 4096 },
])('a recording read back (compress $compress, blockSize $blockSize)', (options) => {
  const { m, bytes } = recordTrolleyRun(options);
  const file = open(bytes);

  it('opens through its index, undamaged', () => {
    expect(file.recovery).toEqual({ indexed: true, indexProblem: null, records: walkFrames(bytes).length, dropped: [] });
    expect(file.damaged).toBe(false);
    expect(file.size).toBe(bytes.length);
  });

  it('returns the header as given, with version 2 when blocks are packed and 1 when not', () => {
    expect(file.header).toEqual({ version: options.compress ? 2 : 1, ...TROLLEY_HEADER });
  });

  it('lists every episode with its length and end record, the empty one included', () => {
    expect(file.episodes.map((e) => [e.episode, e.length, e.missingSteps])).toEqual([
      [0, 7, 0],
      [1, 0, 0],
      [2, 1, 0],
      [3, 5, 0],
    ]);
    expect(file.totalSteps).toBe(13);
    for (const e of m.recordedEpisodes) expect(file.episode(e.episode).end).toEqual(e.end);
  });

  it('ends each episode with its return, length, outcome (defaulting from the flags), failed, reason, mode, final state and Q', () => {
    expect(file.episodes.map((e) => e.end && [e.end.length, e.end.return, e.end.outcome, e.end.failed, e.end.reason, e.end.mode])).toEqual([
      [7, 6 * 0.5 - 1, 'terminal', true, 'mast fell', 'train'],
      [0, 0, 'ended', false, '', 'train'],
      [1, 1, 'truncated', false, 'time limit', 'eval'],
      [5, NaN, 'ended', false, '', 'train'],
    ]);
    expect(file.episode(2).end?.finalState).toEqual(Float32Array.of(1.5, 2.5, 3.5));
    expect(file.episode(2).end?.finalQ).toEqual(Float32Array.of(0.5, 1.5));
    expect(file.episode(3).end?.finalState).toBeNull();
    expect(file.episode(3).end?.finalQ).toEqual(Float32Array.of(7, 8));
    expect(file.episode(0).end?.finalState).toBeNull();
  });

  it('reads every episode back column by column, bit for bit', () => {
    for (const e of m.recordedEpisodes) {
      const steps = file.readEpisode(e.episode);
      const want = expectedColumns(e.steps, 3, 2, TROLLEY_HEADER.extras);
      expect(steps.n).toBe(e.steps.length);
      expect(Array.from(steps.step)).toEqual(e.steps.map((_, t) => t));
      expect(bitsOf(steps.state)).toEqual(bitsOf(want.state));
      expect(steps.action).toEqual(want.action);
      expect(bitsOf(steps.reward)).toEqual(bitsOf(want.reward));
      expect(steps.flags).toEqual(want.flags);
      expect(bitsOf(steps.q)).toEqual(bitsOf(want.q));
      expect(bitsOf(steps.epsilon)).toEqual(bitsOf(want.epsilon));
      expect(Object.keys(steps.extras)).toEqual(TROLLEY_HEADER.extras);
      for (const x of TROLLEY_HEADER.extras) expect(bitsOf(steps.extras[x])).toEqual(bitsOf(want.extras[x]));
      expect(steps.weights).toEqual(want.weights);
      expect(steps.end).toEqual(e.end);
    }
  });

  it('splits each episode into blocks of at most blockSize consecutive steps', () => {
    const want = expectedBlocks(m.episodes, options.blockSize, 3, 2, TROLLEY_HEADER.extras);
    expect(file.blocks.map((b) => [b.episode, b.firstStep, b.n])).toEqual(want.map((b) => [b.episode, b.firstStep, b.n]));
    file.blocks.forEach((_, i) => {
      const block = file.readBlock(i);
      expect({ ...block, state: bitsOf(block.state), reward: bitsOf(block.reward), q: bitsOf(block.q), epsilon: bitsOf(block.epsilon) }).toEqual({
        ...want[i],
        state: bitsOf(want[i].state),
        reward: bitsOf(want[i].reward),
        q: bitsOf(want[i].q),
        epsilon: bitsOf(want[i].epsilon),
      });
    });
  });

  it('keeps ε absent as NaN beside present values, and a block without any ε has none', () => {
    const e3 = file.readEpisode(3);
    expect(Array.from(e3.epsilon!)).toEqual([0, NaN, f32(0.2), NaN, f32(0.4)]);
    expect(file.readEpisode(2).epsilon).toBeNull();
    if (options.blockSize === 3) {
      // Episode 3 is blocks [0..2] and [3..4]: the second has ε only on its row 1.
      const last = file.readBlock(file.blocks.length - 1);
      expect(Array.from(last.epsilon!)).toEqual([NaN, f32(0.4)]);
    }
  });

  it('stores NaN, ±Infinity, −0 and subnormals in Q and reward bit for bit', () => {
    const e3 = file.readEpisode(3);
    const q = rawBitsOf(e3.q);
    // The recorder takes plain JS numbers, and ECMAScript (NumericToRawBytes) lets an engine pick
    // any NaN encoding when a number is stored: a NaN payload is only promised to stay a NaN here.
    // The column codec's own test checks that payloads survive once they are bytes.
    expect(Number.isNaN(e3.q[6])).toBe(true);
    q[6] = 'NaN';
    expect(q).toEqual([
      '7fc00000', '3f800000',
      '7f800000', 'ff800000',
      '80000000', '00000001',
      'NaN', '40400000',
      '40800000', '40a00000',
    ]);
    expect(rawBitsOf(e3.reward)).toEqual(['7fc00000', '7f800000', 'ff800000', '00000000', '3e800000']);
  });

  it('counts the non-finite Q-values and rewards it was given', () => {
    expect(m.recorder.stats).toEqual({
      steps: 13,
      episodes: 4,
      blocks: options.blockSize === 3 ? 6 : 3,
      snapshots: 5,
      nonFiniteQ: 4, // NaN, +Infinity, −Infinity, NaN with payload
      nonFiniteReward: 3, // NaN, +Infinity, −Infinity
      bytesWritten: bytes.length,
    });
  });

  it('changes the weights in force at the step after each snapshot, within or across blocks', () => {
    const [first, , second, , targetSync] = m.snapshots.map((s) => s.id);
    expect(file.readEpisode(0).weights).toEqual([
      [0, first, first],
      [4, second, first],
    ]);
    // An earlier snapshot with inForce false leaves the ids alone; the one at step 3 takes over.
    expect(file.readEpisode(3).weights).toEqual([
      [0, second, first],
      [3, second, targetSync],
    ]);
    expect(weightRuns(m.episodes[3].steps)).toEqual(file.readEpisode(3).weights);
    if (options.blockSize === 3) {
      // Episode 0's second block starts at step 3 with the first weights and changes at its row 1.
      expect(file.readBlock(1).weights).toEqual([
        [0, first, first],
        [1, second, first],
      ]);
      expect(file.readBlock(2).weights).toEqual([[0, second, first]]);
    }
  });

  it('stores each snapshot with its role, training step, id, layers and activations', () => {
    expect(file.snapshots.map((s) => [s.role, s.trainingStep, s.id, s.hasLayers])).toEqual(
      // Only the first record of each set of weights carries them.
      m.snapshots.map((s, i) => [s.role, s.trainingStep, s.id, m.snapshots.findIndex((o) => o.id === s.id) === i]),
    );
    m.snapshots.forEach((s, i) => {
      const read = file.readSnapshot(file.snapshots[i]);
      expect(read).toEqual({ role: s.role, trainingStep: s.trainingStep, id: s.id, layers: s.layers });
      expect(read.id).toBe(snapshotId(s.layers));
    });
    expect(file.readSnapshot(file.snapshots[0]).layers.map((l) => l.activation)).toEqual(LAYER_ACTIVATIONS);
    expect(new Set(LAYER_ACTIVATIONS)).toEqual(new Set(['linear', 'relu', 'tanh', 'sigmoid', 'elu', 'softplus']));
  });

  it('stores a second snapshot with identical weights without layers, and still reads back the same weights', () => {
    const [online, target] = file.snapshots;
    expect(target.id).toBe(online.id);
    expect(target.hasLayers).toBe(false);
    const payload = walkFrames(bytes).find((f) => f.offset === target.offset)!.payload;
    expect((decode(payload) as { layers: unknown }).layers).toBeNull();
    expect(file.readSnapshot(target).layers).toEqual(file.readSnapshot(online).layers);
    expect(file.snapshotById(online.id)).toBe(online);
    expect(file.snapshotById('0000000000000000')).toBeNull();
  });

  it('keeps the notes, defaulting to the episode being recorded', () => {
    expect(file.notes).toEqual([
      { episode: 0, from: 2, to: 5, text: 'mast starts to tip' },
      { episode: 3, from: 1, to: 3, text: '<b>spike</b> — Q ∞, return NaN' },
    ]);
    expect(file.notes).toEqual(m.notes);
  });

  it('writes the records in order: header, blocks and ends per episode, then index and trailer', () => {
    const kinds = walkFrames(bytes).map((f) => f.kind);
    expect(kinds[0]).toBe(KIND.header);
    expect(kinds.slice(-2)).toEqual([KIND.index, KIND.trailer]);
    expect(kinds.filter((k) => k === KIND.episodeEnd)).toHaveLength(4);
    expect(walkFrames(bytes).at(-1)!.end).toBe(bytes.length);
  });
});

describe('recorder header defaults', () => {
  it('fills in the version, empty extras and run, a creation time, the kind as title and no params', () => {
    const sink = new MemorySink();
    const before = Date.now();
    const rec = createRecorder(sink, { stateDims: [{ name: 'x', unit: '' }], actions: ['a'], gamma: 1, system: { kind: 'rover', map: {} } });
    rec.close();
    const { header } = open(sink.bytes());
    expect({ ...header, createdAt: undefined }).toEqual({
      version: 1,
      stateDims: [{ name: 'x', unit: '' }],
      actions: ['a'],
      gamma: 1,
      system: { kind: 'rover', title: 'rover', map: {}, params: {} },
      extras: [],
      run: {},
      createdAt: undefined,
    });
    expect(Date.parse(header.createdAt!)).toBeGreaterThanOrEqual(before - 1000);
  });
});

describe('action dtype', () => {
  it.each([
    [2, 'u8'],
    [256, 'u8'],
    [257, 'u16'],
    [300, 'u16'],
    [65536, 'u16'],
    [65537, 'u32'],
    [70000, 'u32'],
  ])('with A = %i stores actions as %s and reads back the highest action index', (A, dtype) => {
    const sink = new MemorySink();
    const rec = createRecorder(
      sink,
      { stateDims: [{ name: 'x', unit: 'm' }], actions: Array.from({ length: A }, (_, i) => `a${i}`), gamma: 0.9, system: { kind: 'many-armed', map: {} } },
      { blockSize: 4 },
    );
    const actions = [0, A - 1, Math.floor(A / 2), A - 2, 1];
    const q = new Float32Array(A).map((_, i) => i % 17);
    for (const action of actions) rec.step({ state: [action], action, reward: 0, q });
    rec.endEpisode();
    rec.close();
    const bytes = sink.bytes();
    const file = open(bytes);
    expect(file.header.actions).toHaveLength(A);
    const steps = file.readEpisode(0);
    expect(Array.from(steps.action)).toEqual(actions);
    expect(steps.q.subarray((actions.length - 1) * A)).toEqual(q);
    const blockPayloads = walkFrames(bytes).filter((f) => f.kind === KIND.stepBlock).map((f) => decode(f.payload) as { action: { dtype: string } });
    expect(blockPayloads.map((p) => p.action.dtype)).toEqual([dtype, dtype]);
  });
});

describe('episode sizes and widths', () => {
  it.each([false, true])('round-trips a wide state of D = 512 dimensions (compress %s)', (compress) => {
    const D = 512;
    const sink = new MemorySink();
    const dims = Array.from({ length: D }, (_, i) => ({ name: `pixel ${i}`, unit: 'lux' }));
    const rec = createRecorder(sink, { stateDims: dims, actions: ['left', 'right'], gamma: 0.9, system: { kind: 'camera', map: { centre: 511 } } }, { blockSize: 2, compress });
    const random = seededRandom(512);
    const states = Array.from({ length: 5 }, () => Float32Array.from({ length: D }, () => random() * 100 - 50));
    states.forEach((state, t) => rec.step({ state, action: t % 2, reward: 1, q: [t, -t] }));
    rec.endEpisode({ finalState: states[0] });
    rec.close();
    const file = open(sink.bytes());
    expect(file.header.stateDims).toEqual(dims);
    expect(file.header.system.map).toEqual({ centre: 511 });
    const steps = file.readEpisode(0);
    expect(bitsOf(steps.state)).toEqual(bitsOf(Float32Array.from(states.flatMap((s) => Array.from(s)))));
    expect(file.blocks.map((b) => b.n)).toEqual([2, 2, 1]);
    expect(steps.end?.finalState).toEqual(states[0]);
  });

  it.each([
    [0, 'ended'],
    [1, 'terminal'],
  ])('records an episode of %i steps on its own', (length, outcome) => {
    const sink = new MemorySink();
    const rec = createRecorder(sink, { stateDims: [{ name: 'x', unit: 'm' }], actions: ['a', 'b'], gamma: 0.5, system: { kind: 'rover', map: { position: 0 } } }, { blockSize: 3 });
    for (let t = 0; t < length; t++) rec.step({ state: [t + 0.5], action: 1, reward: 2, q: [3, 4], terminal: true });
    expect(rec.endEpisode()).toBe(0);
    expect(rec.currentEpisode).toBe(1);
    rec.close();
    const file = open(sink.bytes());
    expect(file.episodes).toHaveLength(1);
    expect(file.blocks).toHaveLength(length);
    const steps = file.readEpisode(0);
    expect(steps.n).toBe(length);
    expect(Array.from(steps.state)).toEqual(length ? [0.5] : []);
    expect(Array.from(steps.q)).toEqual(length ? [3, 4] : []);
    expect(steps.end).toEqual({ episode: 0, length, return: 2 * length, outcome, failed: false, reason: '', mode: 'train', finalState: null, finalQ: null });
  });

  it('lets terminal decide the outcome of a step flagged both terminal and truncated', () => {
    const sink = new MemorySink();
    const rec = createRecorder(sink, { stateDims: [{ name: 'x', unit: 'm' }], actions: ['a', 'b'], gamma: 0.5, system: { kind: 'rover', map: {} } });
    rec.step({ state: [0], action: 0, reward: 1, q: [0, 0], terminal: true, truncated: true, explored: true });
    rec.endEpisode();
    rec.close();
    const file = open(sink.bytes());
    expect(Array.from(file.readEpisode(0).flags)).toEqual([1 | 2 | 4]);
    expect(file.episode(0).end?.outcome).toBe('terminal');
  });

  it('keeps the steps of an episode that was never ended when the recorder closes', () => {
    const sink = new MemorySink();
    const rec = createRecorder(sink, { stateDims: [{ name: 'x', unit: 'm' }], actions: ['a', 'b'], gamma: 0.5, system: { kind: 'rover', map: {} } }, { blockSize: 3 });
    for (let t = 0; t < 4; t++) rec.step({ state: [t], action: 0, reward: 1, q: [0, 0] });
    rec.close();
    const file = open(sink.bytes());
    expect(file.episodes).toEqual([{ episode: 0, length: 4, blocks: [0, 1], end: null, missingSteps: 0 }]);
    expect(Array.from(file.readEpisode(0).state)).toEqual([0, 1, 2, 3]);
  });
});

describe('weights runs at the edges of a block', () => {
  it('never starts a run at a row the block does not have (snapshot after the last step of an episode)', () => {
    // A training loop that syncs its target network right after the last step of an episode:
    // the block is flushed by endEpisode with a run that starts one row past its end.
    const sink = new MemorySink();
    const rec = createRecorder(sink, { stateDims: [{ name: 'x', unit: 'm' }], actions: ['a', 'b'], gamma: 0.5, system: { kind: 'rover', map: {} } }, { blockSize: 10 });
    const layers: DenseLayer[] = [{ inputs: 1, outputs: 2, activation: 'linear', weights: Float32Array.of(1, 2), bias: Float32Array.of(0, 0) }];
    rec.step({ state: [0], action: 0, reward: 1, q: [0, 0] });
    rec.step({ state: [1], action: 1, reward: 1, q: [0, 0] });
    const id = rec.snapshot({ role: 'target', trainingStep: 2, layers });
    rec.endEpisode();
    rec.step({ state: [2], action: 0, reward: 1, q: [0, 0] });
    rec.endEpisode();
    rec.close();
    const file = open(sink.bytes());
    expect(file.readBlock(1).weights).toEqual([[0, '', id]]); // the new ids do reach the next block
    for (let i = 0; i < file.blocks.length; i++) {
      const block = file.readBlock(i);
      for (const [row] of block.weights) expect(row, `block ${i} has ${block.n} rows`).toBeLessThan(block.n);
    }
    // reader.ts documents EpisodeSteps.weights as "each run starting at a row of this episode".
    const steps = file.readEpisode(0);
    for (const [row] of steps.weights) expect(row).toBeLessThan(steps.n);
  });
});

describe('values beyond the float32 range', () => {
  it.each([false, true])('are stored as ±Infinity and counted as non-finite, like any infinity (compress %s)', (compress) => {
    // float32's largest finite value is (2 − 2⁻²³)·2¹²⁷ ≈ 3.4028235e38 (IEEE 754-2008, binary32);
    // 1e39 and 3.5e38 round past it to infinity, 3.4e38 stays finite.
    const sink = new MemorySink();
    const rec = createRecorder(sink, { stateDims: [{ name: 'x', unit: 'm' }], actions: ['a', 'b'], gamma: 0.5, system: { kind: 'rover', map: {} } }, { compress });
    rec.step({ state: [0], action: 0, reward: 3.5e38, q: [1e39, -1e39] });
    rec.step({ state: [1], action: 1, reward: 3.4e38, q: [3.4e38, 0] });
    rec.endEpisode();
    rec.close();
    expect([rec.stats.nonFiniteQ, rec.stats.nonFiniteReward]).toEqual([2, 1]);
    const steps = open(sink.bytes()).readEpisode(0);
    expect(Array.from(steps.q)).toEqual([Infinity, -Infinity, Math.fround(3.4e38), 0]);
    expect(Array.from(steps.reward)).toEqual([Infinity, Math.fround(3.4e38)]);
  });
});

import * as tf from '@tensorflow/tfjs';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { ACTIVATIONS } from '../../formats/types.ts';
import { createQEvaluator, type QEvaluator } from '../../src/net/evaluator.ts';
import { forwardDense } from '../../src/net/forward.ts';
import { mismatches, randomLayers, randomStates } from './helpers.ts';

const layers = randomLayers([4, 64, 64, 2], 'relu', 42);
const N = 10_000;
const states = randomStates(N, 4, 43);
const NAN_ROWS = [0, 17, 4242, 9999];
NAN_ROWS.forEach((r, i) => (states[r * 4 + (i % 4)] = NaN));
// One infinite input: ±Infinity meeting weights of both signs gives NaN, which must also agree.
states[123 * 4 + 1] = Infinity;
const reference = forwardDense(layers, states, N);

// TensorFlow.js has one backend per process, so each backend's evaluator is made, tested and
// disposed before the next (describe blocks run in order).
describe.each(['wasm', 'cpu', 'js'] as const)('createQEvaluator on %s', (backend) => {
  let evaluator: QEvaluator;
  let tensorsBefore: number;

  beforeAll(async () => {
    tensorsBefore = tf.memory().numTensors;
    evaluator = await createQEvaluator(layers, { backend });
  });
  afterAll(() => evaluator.dispose());

  it('runs on the backend asked for, and its note says so', () => {
    expect(evaluator.backend).toBe(backend);
    expect(evaluator.note).toMatch({ wasm: /wasm backend/, cpu: /cpu backend/, js: /JavaScript/ }[backend]);
    expect([evaluator.inputs, evaluator.outputs]).toEqual([4, 2]);
  });

  it('equals forwardDense within 1e-5 on 10,000 states; NaN rows give NaN in those rows only', () => {
    const q = evaluator.evaluate(states, N);
    expect(mismatches(q, reference, 2, 1e-5)).toEqual([]);
    const nanRows: number[] = [];
    for (let r = 0; r < N; r++) if (Number.isNaN(q[2 * r]) || Number.isNaN(q[2 * r + 1])) nanRows.push(r);
    expect(nanRows).toEqual([0, 17, 123, 4242, 9999]);
    expect([Number.isNaN(q[2 * 123]), Number.isNaN(q[2 * 123 + 1])]).toEqual([true, true]);
  });

  it('handles batches of 2, 1 and 0 rows', () => {
    const two = states.subarray(4 * 4, 6 * 4);
    expect(mismatches(evaluator.evaluate(two, 2), reference.subarray(8, 12), 2, 1e-5)).toEqual([]);
    expect(mismatches(evaluator.evaluate(states.subarray(20, 24), 1), reference.subarray(10, 12), 2, 1e-5)).toEqual([]);
    expect(evaluator.evaluate(new Float32Array(0), 0)).toEqual(new Float32Array(0));
    expect(() => evaluator.evaluate(two, 3)).toThrow('8 values are not 3 states of 4 (expected 12)');
  });

  it('leaves no tensor behind across 20 evaluate calls', () => {
    const start = tf.memory().numTensors;
    for (let i = 0; i < 20; i++) evaluator.evaluate(states.subarray(0, 1000 * 4), 1000);
    expect(tf.memory().numTensors).toBe(start);
  });

  it('gives the same answer when a call is cut into tensors of 999 rows', async () => {
    // Some chunks hold a non-finite row and some do not, so both ways of running relu are used.
    const chunked = await createQEvaluator(layers, { backend, chunkRows: 999 });
    const q = chunked.evaluate(states, N);
    chunked.dispose();
    expect(mismatches(q, reference, 2, 1e-5)).toEqual([]);
  });

  it('equals forwardDense within 1e-5 on finite states (no NaN guard needed)', () => {
    const finite = randomStates(3000, 4, 44);
    expect(mismatches(evaluator.evaluate(finite, 3000), forwardDense(layers, finite, 3000), 2, 1e-5)).toEqual([]);
  });

  it('keeps a NaN whose sign bit is set (what ∞ − ∞ gives) as NaN, not 0', () => {
    const s = randomStates(3, 4, 45);
    new Uint32Array(s.buffer)[1 * 4 + 2] = 0xffc00000;
    const q = evaluator.evaluate(s, 3);
    expect(Array.from(q, Number.isNaN)).toEqual([false, false, true, true, false, false]);
  });

  it('carries a NaN weight to the one action it feeds, for every row', async () => {
    const poisoned = layers.map((l) => ({ ...l, weights: l.weights.slice() }));
    poisoned[2].weights[7 * 2 + 1] = NaN;
    const e = await createQEvaluator(poisoned, { backend });
    // Rows 1000–1099 hold no NaN input, so any NaN in action 0 would be wrong.
    const some = states.subarray(1000 * 4, 1100 * 4);
    const q = e.evaluate(some, 100);
    e.dispose();
    expect(mismatches(q, forwardDense(poisoned, some, 100), 2, 1e-5)).toEqual([]);
    expect(Array.from({ length: 100 }, (_, r) => [Number.isNaN(q[2 * r]), Number.isNaN(q[2 * r + 1])]).filter(([a, b]) => a || !b)).toEqual([]);
  });

  it.each(ACTIVATIONS.filter((a) => a !== 'relu'))('equals forwardDense within 1e-5 with %s hidden units', async (activation) => {
    const net = randomLayers([4, 64, 64, 2], activation, 7);
    const e = await createQEvaluator(net, { backend });
    const some = states.subarray(0, 2000 * 4);
    const q = e.evaluate(some, 2000);
    e.dispose();
    expect(mismatches(q, forwardDense(net, some, 2000), 2, 1e-5)).toEqual([]);
  });

  it('dispose frees the weight tensors, and evaluate refuses afterwards', async () => {
    const before = tf.memory().numTensors;
    const e = await createQEvaluator(layers, { backend });
    expect(tf.memory().numTensors - before).toBe(backend === 'js' ? 0 : 6);
    e.dispose();
    expect(tf.memory().numTensors).toBe(before);
    expect(() => e.evaluate(states.subarray(0, 4), 1)).toThrow('this evaluator has been disposed');
    // The suite's own evaluator still holds exactly its 3 kernels and 3 biases.
    expect(tf.memory().numTensors - tensorsBefore).toBe(backend === 'js' ? 0 : 6);
  });
});

// The kernels a call ran, by name: what shows whether an activation ran inside the matMul.
async function kernelsOf(e: QEvaluator, some: Float32Array, n: number): Promise<{ q: Float32Array; kernels: string[] }> {
  let q: Float32Array = new Float32Array(0);
  const info = await tf.profile(() => {
    q = e.evaluate(some, n);
  });
  return { q, kernels: info.kernels.map((k) => k.name) };
}

describe.each(['wasm', 'cpu'] as const)('createQEvaluator on %s, activations inside the matMul kernel', (backend) => {
  it.each(['relu', 'sigmoid', 'elu'] as const)(
    'on a finite chunk, %s fused into the matMul gives the Q of the separate op, both within 1e-6 of forwardDense',
    async (activation) => {
      const net = randomLayers([4, 64, 64, 2], activation, 8);
      const finite = randomStates(2000, 4, 46);
      const reference = forwardDense(net, finite, 2000);
      const fused = await createQEvaluator(net, { backend });
      const unfused = await createQEvaluator(net, { backend, fuseActivations: false });
      const a = await kernelsOf(fused, finite, 2000);
      const b = await kernelsOf(unfused, finite, 2000);
      fused.dispose();
      unfused.dispose();
      // Without this the test would pass just as well if nothing were fused.
      expect(a.kernels).toEqual(['_FusedMatMul', '_FusedMatMul', '_FusedMatMul']);
      expect(b.kernels.filter((k) => k !== '_FusedMatMul')).toHaveLength(2);
      expect(mismatches(a.q, b.q, 2, 1e-6)).toEqual([]);
      expect(mismatches(a.q, reference, 2, 1e-6)).toEqual([]);
      expect(mismatches(b.q, reference, 2, 1e-6)).toEqual([]);
    },
  );

  it('with fusion on, a chunk holding a NaN still gives NaN in its row, and the finite chunk beside it is fused', async () => {
    // A NaN with its sign bit clear: tf.relu on wasm keeps it, but the fused relu would make it 0
    // and the row's Q finite, so this fails if a chunk at risk were ever fused.
    const some = randomStates(200, 4, 47);
    new Uint32Array(some.buffer)[150 * 4 + 3] = 0x7fc00000;
    const e = await createQEvaluator(layers, { backend, chunkRows: 100 });
    const { q, kernels } = await kernelsOf(e, some, 200);
    e.dispose();
    const nanRows = Array.from({ length: 200 }, (_, r) => r).filter((r) => Number.isNaN(q[2 * r]) || Number.isNaN(q[2 * r + 1]));
    expect(nanRows).toEqual([150]);
    expect(mismatches(q, forwardDense(layers, some, 200), 2, 1e-6)).toEqual([]);
    // Rows 0–99 in three fused matMuls; rows 100–199 with relu kept apart, once per hidden layer.
    expect(kernels.filter((k) => k === '_FusedMatMul')).toHaveLength(6);
    expect(kernels.filter((k) => k === 'Relu')).toHaveLength(2);
  });
});

describe('createQEvaluator, backend choice', () => {
  it("'auto' runs on wasm, or says in its note that wasm could not start", async () => {
    const e = await createQEvaluator(layers);
    if (e.backend === 'wasm') expect(e.note).toBe('TensorFlow.js wasm backend');
    else expect(e.note).toMatch(/^wasm could not start \(.+\); using cpu$/);
    expect(mismatches(e.evaluate(states.subarray(0, 400), 100), reference.subarray(0, 200), 2, 1e-5)).toEqual([]);
    e.dispose();
  });

  it('refuses to run after TensorFlow.js has switched to another backend, naming both', async () => {
    const onWasm = await createQEvaluator(layers, { backend: 'wasm' });
    const onCpu = await createQEvaluator(layers, { backend: 'cpu' });
    expect(() => onWasm.evaluate(states.subarray(0, 4), 1)).toThrow('built on the wasm backend, but TensorFlow.js has since switched to cpu; create the evaluator again');
    expect(onCpu.evaluate(states.subarray(0, 4), 1).length).toBe(2);
    onWasm.dispose();
    onCpu.dispose();
  });

  it('refuses layers that do not chain, before making any tensor', async () => {
    const before = tf.memory().numTensors;
    const broken = [layers[0], layers[0]];
    await expect(createQEvaluator(broken, { backend: 'cpu' })).rejects.toThrow('createQEvaluator: layer 1 takes 4 inputs but layer 0 gives 64');
    expect(tf.memory().numTensors).toBe(before);
  });
});

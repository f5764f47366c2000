import * as tf from '@tensorflow/tfjs';
import { beforeAll, describe, expect, it } from 'vitest';
import { buildQNetwork, clipByGlobalNorm, copyWeights, qValues, toDenseLayers } from '../../src/agent/network.ts';
import { HIDDEN_ACTIVATIONS } from '../../src/agent/settings.ts';
import { useTestBackend } from './backend.ts';
import { forwardDense } from './helpers.ts';

const shape = { inputs: 3, hidden: [5, 4], outputs: 2, activation: 'tanh' as const, seed: 11 };
const states = new Float32Array([0.1, -0.2, 0.3, 1, 2, -3, 0, 0, 0.5]);

beforeAll(async () => {
  expect(await useTestBackend()).toMatch(/^(wasm|cpu)$/);
});

describe('Q-network', () => {
  it('toDenseLayers reads kernels as [inputs][outputs] row-major: a plain forward pass over them matches qValues', () => {
    const model = buildQNetwork(shape);
    const layers = toDenseLayers(model);
    expect(layers.map((l) => [l.inputs, l.outputs, l.activation])).toEqual([[3, 5, 'tanh'], [5, 4, 'tanh'], [4, 2, 'linear']]);
    const q = qValues(model, states, 3);
    expect(q.length).toBe(6);
    for (let i = 0; i < 3; i++) {
      const expected = forwardDense(layers, states.subarray(i * 3, i * 3 + 3));
      expect(q[i * 2]).toBeCloseTo(expected[0], 5);
      expect(q[i * 2 + 1]).toBeCloseTo(expected[1], 5);
    }
    model.dispose();
  });

  it('builds identical weights from the same seed, different ones from another', () => {
    const a = buildQNetwork(shape);
    const b = buildQNetwork(shape);
    const c = buildQNetwork({ ...shape, seed: 12 });
    expect(toDenseLayers(a)).toEqual(toDenseLayers(b));
    expect(toDenseLayers(a)[0].weights).not.toEqual(toDenseLayers(c)[0].weights);
    for (const m of [a, b, c]) m.dispose();
  });

  it('copyWeights makes the target compute what the online net computes, and leaks no tensor', () => {
    const online = buildQNetwork(shape);
    const target = buildQNetwork({ ...shape, seed: 99 });
    const before = tf.memory().numTensors;
    copyWeights(online, target);
    expect(tf.memory().numTensors).toBe(before);
    expect(Array.from(qValues(target, states, 3))).toEqual(Array.from(qValues(online, states, 3)));
    expect(tf.memory().numTensors).toBe(before);
    // Writing the online weights afterwards must leave the target's copy alone.
    const saved = toDenseLayers(target);
    online.setWeights(online.getWeights().map((w) => tf.tidy(() => tf.add(w, 1))));
    expect(toDenseLayers(target)).toEqual(saved);
    online.dispose();
    target.dispose();
  });

  it('tf.losses.huberLoss agrees with Huber 1964 (ρ = ½t² for |t| ≤ δ, δ|t| − ½δ² beyond) at the REFERENCES.md check values', () => {
    const huber = (t: number, delta: number): number => tf.tidy(() => tf.losses.huberLoss(tf.tensor1d([0]), tf.tensor1d([t]), undefined, delta).dataSync()[0]);
    expect(huber(0.5, 1)).toBeCloseTo(0.125, 6);
    expect(huber(2, 1)).toBeCloseTo(1.5, 6);
    expect(huber(-3, 1)).toBeCloseTo(2.5, 6);
    expect(huber(1, 0.5)).toBeCloseTo(0.375, 6);
    // The worked target example: δ = y − Q(s, a) = 3.97 − 2.5 (DQN) and 2.98 − 2.5 (Double DQN).
    expect(huber(3.97 - 2.5, 1)).toBeCloseTo(0.97, 5);
    expect(huber(2.98 - 2.5, 1)).toBeCloseTo(0.1152, 5);
  });

  it.each(HIDDEN_ACTIVATIONS)('names the %s activation as the step file does, and computes it the same way', (activation) => {
    const model = buildQNetwork({ ...shape, activation });
    const layers = toDenseLayers(model);
    expect(layers.map((l) => l.activation)).toEqual([activation, activation, 'linear']);
    const q = qValues(model, states, 3);
    const expected = forwardDense(layers, states.subarray(3, 6));
    expect(q[2]).toBeCloseTo(expected[0], 5);
    expect(q[3]).toBeCloseTo(expected[1], 5);
    model.dispose();
  });

  it('clipByGlobalNorm rescales all gradients by one factor so their joint norm is the limit — Pascanu, Mikolov & Bengio 2013 (from memory)', () => {
    tf.tidy(() => {
      const grads = { a: tf.tensor1d([3]), b: tf.tensor2d([[0, 4]]) };
      const clipped = clipByGlobalNorm(grads, 1);
      expect(Array.from(clipped.a.dataSync())).toEqual([expect.closeTo(0.6, 6)]);
      expect(Array.from(clipped.b.dataSync())).toEqual([0, expect.closeTo(0.8, 6)]);
      const untouched = clipByGlobalNorm(grads, 10);
      expect(Array.from(untouched.a.dataSync())).toEqual([3]);
      expect(Array.from(untouched.b.dataSync())).toEqual([0, 4]);
    });
  });
});

describe('qValues keeps the evidence of a diverged network', () => {
  it('returns NaN, not 0, when a weight is NaN (the wasm relu alone would zero it)', () => {
    const model = buildQNetwork({ inputs: 2, hidden: [4], outputs: 2, activation: 'relu', seed: 3 });
    const [kernel, bias] = model.layers[0].getWeights();
    const k = kernel.arraySync() as number[][];
    // ∞ − ∞ makes a NaN with its sign bit set: the kind the wasm relu turns into 0.
    k[0][0] = Infinity;
    k[1][0] = -Infinity;
    model.layers[0].setWeights([tf.tensor2d(k), bias]);
    const q = qValues(model, new Float32Array([1, 1]), 1);
    expect(Array.from(q).some(Number.isNaN)).toBe(true);
    model.dispose();
  });
});

import * as tf from '@tensorflow/tfjs';
import { beforeAll, describe, expect, it } from 'vitest';
import { ACTIVATIONS, type Activation, type DenseLayer } from '../../formats/types.ts';
import { forwardDense } from '../../src/net/forward.ts';
import { mismatches, randomLayers, randomStates } from './helpers.ts';

/**
 * A 2 → 3 → 2 network whose sums are worked out by hand. Two states, s₀ = (1, 2), s₁ = (−2, 0.5):
 *   pre-activations h(s₀) = (0.5 + 0.5 − 2.5, −1 + 1.5 + 0, 1 + 1 + 0)        = (−1.5, 0.5, 2)
 *                   h(s₁) = (−1 + 0.125 − 2.5, 2 + 0.375 + 0, −2 + 0.25 + 0) = (−3.375, 2.375, −1.75)
 *   Q(s, 0) = g(h₀) + 2·g(h₁) − g(h₂) + 0.125
 *   Q(s, 1) = −0.5·g(h₀) + 0.25·g(h₂) − 0.25
 */
const handNet = (activation: Activation): DenseLayer[] => [
  { inputs: 2, outputs: 3, activation, weights: Float32Array.of(0.5, -1, 1, 0.25, 0.75, 0.5), bias: Float32Array.of(-2.5, 0, 0) },
  { inputs: 3, outputs: 2, activation: 'linear', weights: Float32Array.of(1, -0.5, 2, 0, -1, 0.25), bias: Float32Array.of(0.125, -0.25) },
];
const handStates = Float32Array.of(1, 2, -2, 0.5);
const handQ = (g: (x: number) => number): number[] =>
  [[-1.5, 0.5, 2], [-3.375, 2.375, -1.75]].flatMap(([h0, h1, h2]) => [g(h0) + 2 * g(h1) - g(h2) + 0.125, -0.5 * g(h0) + 0.25 * g(h2) - 0.25]);

/** The activations by their definitions, written out independently of src/net. */
const DEFINITIONS: Record<Activation, (x: number) => number> = {
  linear: (x) => x,
  relu: (x) => Math.max(0, x),
  tanh: (x) => Math.tanh(x),
  sigmoid: (x) => 1 / (1 + Math.exp(-x)),
  // ELU with α = 1 (Clevert, Unterthiner & Hochreiter 2016, from memory).
  elu: (x) => (x > 0 ? x : Math.exp(x) - 1),
  softplus: (x) => Math.log(1 + Math.exp(x)),
};

describe('forwardDense', () => {
  it('computes the hand-worked 2 → 3 → 2 network exactly for linear and relu (dyadic sums, no rounding)', () => {
    // linear: Q(s₀) = (−1.5 + 1 − 2 + 0.125, 0.75 + 0.5 − 0.25); Q(s₁) = (−3.375 + 4.75 + 1.75 + 0.125, 1.6875 − 0.4375 − 0.25)
    expect(Array.from(forwardDense(handNet('linear'), handStates, 2))).toEqual([-2.375, 1, 3.25, 1]);
    // relu: g(h(s₀)) = (0, 0.5, 2), g(h(s₁)) = (0, 2.375, 0)
    expect(Array.from(forwardDense(handNet('relu'), handStates, 2))).toEqual([-0.875, 0.25, 4.875, -0.25]);
  });

  it.each(ACTIVATIONS)('computes the hand-worked network with %s hidden units to float32 precision', (activation) => {
    const q = forwardDense(handNet(activation), handStates, 2);
    const expected = handQ(DEFINITIONS[activation]);
    expected.forEach((e, i) => expect(q[i]).toBeCloseTo(e, 6));
  });

  it('keeps each activation finite and exact at the extremes, and carries NaN and ±Infinity through', () => {
    const inputs = Float32Array.of(1000, -1000, 0, NaN, Infinity, -Infinity);
    const oneByOne = (activation: Activation): DenseLayer[] => [
      { inputs: 1, outputs: 1, activation, weights: Float32Array.of(1), bias: Float32Array.of(0) },
    ];
    const expected: Record<Activation, number[]> = {
      linear: [1000, -1000, 0, NaN, Infinity, -Infinity],
      relu: [1000, 0, 0, NaN, Infinity, 0],
      tanh: [1, -1, 0, NaN, 1, -1],
      sigmoid: [1, 0, 0.5, NaN, 1, 0],
      elu: [1000, -1, 0, NaN, Infinity, -1],
      // log(1 + e¹⁰⁰⁰) = 1000 to double precision; computed naively, e¹⁰⁰⁰ would overflow to Infinity.
      softplus: [1000, 0, Math.fround(Math.LN2), NaN, Infinity, 0],
    };
    for (const activation of ACTIVATIONS) {
      expect({ activation, q: Array.from(forwardDense(oneByOne(activation), inputs, 6)) }).toEqual({ activation, q: expected[activation] });
    }
  });

  it('confines a NaN input to its own row, and a NaN weight to the action it feeds', () => {
    const layers = randomLayers([3, 5, 2], 'relu', 3);
    const states = randomStates(4, 3, 4);
    states[1 * 3 + 2] = NaN;
    const q = forwardDense(layers, states, 4);
    expect([0, 1, 2, 3].map((r) => [Number.isNaN(q[2 * r]), Number.isNaN(q[2 * r + 1])])).toEqual([[false, false], [true, true], [false, false], [false, false]]);
    // W of the output layer is [5][2]: entry 2·2 + 0 feeds action 0 from hidden unit 2.
    layers[1].weights[4] = NaN;
    const q2 = forwardDense(layers, randomStates(4, 3, 4), 4);
    expect([0, 1, 2, 3].map((r) => [Number.isNaN(q2[2 * r]), Number.isNaN(q2[2 * r + 1])])).toEqual([[true, false], [true, false], [true, false], [true, false]]);
  });

  it('writes into `out` when given and returns it; refuses states that are not n rows of D', () => {
    const out = new Float32Array(6).fill(7);
    expect(forwardDense(handNet('linear'), handStates, 2, out)).toBe(out);
    expect(Array.from(out)).toEqual([-2.375, 1, 3.25, 1, 7, 7]);
    expect(() => forwardDense(handNet('linear'), handStates, 3)).toThrow('forwardDense: 4 values are not 3 states of 2 (expected 6)');
    expect(() => forwardDense(handNet('linear'), handStates, 2, new Float32Array(3))).toThrow('out holds 3 values; 2 states × 2 actions need 4');
    const broken = handNet('linear');
    broken[1] = { ...broken[1], inputs: 4, weights: new Float32Array(8) };
    expect(() => forwardDense(broken, handStates, 2)).toThrow('forwardDense: layer 1 takes 4 inputs but layer 0 gives 3');
    expect(forwardDense(handNet('linear'), new Float32Array(0), 0)).toEqual(new Float32Array(0));
  });
});

describe('forwardDense against TensorFlow.js (tf.layers.dense, an independent implementation on the npm registry)', () => {
  beforeAll(async () => {
    // The pure-JS cpu backend: the reference is then a second plain-JS implementation, not wasm.
    expect(await tf.setBackend('cpu')).toBe(true);
  });

  it.each(ACTIVATIONS)('agrees within 1e-5 on a 5 → 16 → 8 → 3 network with %s hidden units', (activation) => {
    const layers = randomLayers([5, 16, 8, 3], activation, 100 + ACTIVATIONS.indexOf(activation));
    const model = tf.sequential({
      layers: layers.map((l, k) => tf.layers.dense({ units: l.outputs, activation: l.activation, ...(k === 0 ? { inputShape: [l.inputs] } : {}) })),
    });
    // A TF.js Dense kernel is [inputs, units] row-major, the same layout as DenseLayer.weights.
    tf.tidy(() => model.setWeights(layers.flatMap((l) => [tf.tensor2d(l.weights, [l.inputs, l.outputs]), tf.tensor1d(l.bias)])));
    const n = 500;
    const states = randomStates(n, 5, 7);
    const q = tf.tidy(() => (model.predict(tf.tensor2d(states, [n, 5]), { batchSize: n }) as tf.Tensor).dataSync());
    expect(mismatches(forwardDense(layers, states, n), q, 3, 1e-5)).toEqual([]);
    model.dispose();
  });
});

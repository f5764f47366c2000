import * as tf from '@tensorflow/tfjs';
import { beforeAll, describe, expect, it } from 'vitest';
import { createRandom } from '../../src/envs/random.ts';
import { huber } from '../../src/analysis/losses.ts';

describe('huber', () => {
  // Huber (1964), Ann. Math. Statist. 35: ρ(t) = ½t² for |t| ≤ δ, else δ|t| − ½δ² (check values as listed in REFERENCES.md).
  it.each([
    { t: 0.5, delta: 1, loss: 0.125 },
    { t: 2, delta: 1, loss: 1.5 },
    { t: -3, delta: 1, loss: 2.5 },
    { t: 1, delta: 0.5, loss: 0.375 },
  ])('ρ($t) = $loss at δ = $delta', ({ t, delta, loss }) => {
    expect(huber(t, delta)).toBe(loss);
  });

  it('is quadratic up to δ and linear after it, continuous at |t| = δ', () => {
    // At |t| = δ both branches give ½δ²: Huber (1964), the definition above.
    expect(huber(1, 1)).toBe(0.5);
    expect(huber(-1, 1)).toBe(0.5);
    expect(huber(0, 1)).toBe(0);
  });

  describe('against tf.losses.huberLoss (TensorFlow.js, npm registry), a reference implementation', () => {
    beforeAll(async () => {
      // The cpu backend needs nothing native, so the reference runs wherever the tests do.
      expect(await tf.setBackend('cpu')).toBe(true);
      await tf.ready();
    });

    it.each([1, 0.5, 2])('agrees within 1e-6 on 200 random errors at δ = %s', (delta) => {
      const rng = createRandom(1964);
      // Values in [−2, 2] keep |t| ≤ 4, where float32 (TensorFlow.js) rounds the loss to well under 1e-6.
      const labels = Float32Array.from({ length: 200 }, () => rng.uniform(-2, 2));
      const predictions = Float32Array.from({ length: 200 }, () => rng.uniform(-2, 2));
      const reference = tf.tidy(() => tf.losses.huberLoss(tf.tensor1d(labels), tf.tensor1d(predictions), undefined, delta, tf.Reduction.NONE).dataSync());
      expect(reference.length).toBe(200);
      let worst = 0;
      for (let i = 0; i < 200; i++) worst = Math.max(worst, Math.abs(huber(labels[i] - predictions[i], delta) - reference[i]));
      expect(worst).toBeLessThanOrEqual(1e-6);
      // Both branches were exercised, or the agreement says little.
      const beyond = Array.from(labels, (l, i) => Math.abs(l - predictions[i]) > delta).filter(Boolean).length;
      expect(beyond).toBeGreaterThan(10);
      expect(beyond).toBeLessThan(190);
    });
  });
});

/**
 * Seeded networks and states for the net tests, and a comparison of Q arrays that treats NaN and
 * ±Infinity as values to match, not as failures.
 */
import type { Activation, DenseLayer } from '../../formats/types.ts';
import { seededRandom } from '../formats/seeded-bytes.ts';

/** mulberry32, so every test run sees the same weights and states: the one generator of the tests. */
export const seeded = seededRandom;

/**
 * Layers of the given sizes, hidden layers with `hidden`, the output linear as in a Q-network.
 * Glorot-uniform scale (limit √(6 / (in + out)), Glorot & Bengio 2010) keeps Q near 1, where an
 * absolute tolerance of 1e-5 is a fair test of float32 arithmetic.
 */
export function randomLayers(sizes: readonly number[], hidden: Activation, seed: number): DenseLayer[] {
  const rand = seeded(seed);
  const layers: DenseLayer[] = [];
  for (let k = 0; k + 1 < sizes.length; k++) {
    const inputs = sizes[k];
    const outputs = sizes[k + 1];
    const limit = Math.sqrt(6 / (inputs + outputs));
    layers.push({
      inputs,
      outputs,
      weights: Float32Array.from({ length: inputs * outputs }, () => (rand() * 2 - 1) * limit),
      bias: Float32Array.from({ length: outputs }, () => (rand() * 2 - 1) * 0.1),
      activation: k + 2 < sizes.length ? hidden : 'linear',
    });
  }
  return layers;
}

export function randomStates(n: number, dims: number, seed: number, scale = 2): Float32Array {
  const rand = seeded(seed);
  return Float32Array.from({ length: n * dims }, () => (rand() * 2 - 1) * scale);
}

/**
 * Where `actual` differs from `expected`: NaN must meet NaN, an infinity the same infinity, and a
 * finite value a finite value within `tolerance`. At most `limit` entries, each saying row and column.
 */
export function mismatches(actual: ArrayLike<number>, expected: ArrayLike<number>, columns: number, tolerance: number, limit = 8): string[] {
  const out: string[] = [];
  if (actual.length !== expected.length) return [`length ${actual.length}, expected ${expected.length}`];
  for (let i = 0; i < expected.length && out.length < limit; i++) {
    const a = actual[i];
    const e = expected[i];
    const same = Number.isNaN(e) ? Number.isNaN(a) : Number.isFinite(e) ? Math.abs(a - e) <= tolerance : a === e;
    if (!same) out.push(`row ${Math.floor(i / columns)}, column ${i % columns}: ${a}, expected ${e}`);
  }
  return out;
}

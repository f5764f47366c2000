/** The worker's cache of target-network answers: reused for the same states, bounded in bytes. */
import { describe, expect, it } from 'vitest';
import { ForwardCache, fingerprint, layersFingerprint } from '../../viewer/worker/forward-cache.ts';
import type { QFunction } from '../../src/analysis/series.ts';

/** Q(s) = (sum of s, −sum of s) per row of D = 2, counting its calls. */
function countingQ(): { q: QFunction; calls: number[] } {
  const calls: number[] = [];
  const q: QFunction = (states, n) => {
    calls.push(n);
    const out = new Float32Array(n * 2);
    for (let r = 0; r < n; r++) {
      out[r * 2] = states[r * 2] + states[r * 2 + 1];
      out[r * 2 + 1] = -out[r * 2];
    }
    return out;
  };
  return { q, calls };
}

const states = (n: number, from = 0) => Float32Array.from({ length: n * 2 }, (_, i) => from + i);

describe('the forward cache', () => {
  it('answers the same place and the same states from the first pass', () => {
    const cache = new ForwardCache();
    const { q, calls } = countingQ();
    const first = cache.wrap('file|0|net', q)(states(5), 5);
    // A second wrapper, as a second request makes: a new states array with the same values.
    const second = cache.wrap('file|0|net', q)(states(5), 5);
    expect(calls).toEqual([5]);
    expect(Array.from(second)).toEqual(Array.from(first));
    expect(Array.from(first.subarray(0, 4))).toEqual([1, -1, 5, -5]);
  });

  it('computes afresh for other states under the same place, and for another place', () => {
    const cache = new ForwardCache();
    const { q, calls } = countingQ();
    cache.wrap('file|0|net', q)(states(5), 5);
    const other = cache.wrap('file|0|net', q)(states(5, 100), 5);
    expect(Array.from(other.subarray(0, 2))).toEqual([201, -201]);
    cache.wrap('file|1|net', q)(states(5, 100), 5);
    expect(calls).toEqual([5, 5, 5]);
  });

  it('keeps NaN states apart from zeros and from each other’s places', () => {
    const cache = new ForwardCache();
    const { q, calls } = countingQ();
    const withNaN = states(3);
    withNaN[5] = NaN;
    cache.wrap('p', q)(states(3), 3);
    expect(Number.isNaN(cache.wrap('p', q)(withNaN, 3)[4])).toBe(true);
    expect(calls).toEqual([3, 3]);
  });

  it('drops the least recently used answers once their bytes pass the budget', () => {
    // Each answer of 10 rows × 2 float32 is 80 bytes; a budget of 200 holds two.
    const cache = new ForwardCache(200);
    const { q, calls } = countingQ();
    const ask = (place: string) => cache.wrap(place, q)(states(10), 10);
    ask('a');
    ask('b');
    ask('a'); // a is now the more recent
    ask('c'); // b goes
    expect(cache.heldBytes).toBe(160);
    expect(calls.length).toBe(3);
    ask('a');
    ask('c');
    expect(calls.length).toBe(3);
    ask('b');
    expect(calls.length).toBe(4);
  });

  it('does not keep an answer larger than the whole budget', () => {
    const cache = new ForwardCache(40);
    const { q, calls } = countingQ();
    cache.wrap('big', q)(states(10), 10);
    cache.wrap('big', q)(states(10), 10);
    expect(calls.length).toBe(2);
    expect(cache.heldBytes).toBe(0);
  });
});

describe('fingerprints', () => {
  it('tell arrays apart by every bit, −0 and NaN included', () => {
    const a = new Float32Array([1, 2, 3, 4]);
    expect(fingerprint(a)).toBe(fingerprint(Float32Array.from(a)));
    expect(fingerprint(a)).not.toBe(fingerprint(new Float32Array([1, 2, 3, 5])));
    expect(fingerprint(new Float32Array([0]))).not.toBe(fingerprint(new Float32Array([-0])));
    expect(fingerprint(new Float32Array([NaN]))).not.toBe(fingerprint(new Float32Array([0])));
    // A view is read where it sits in its buffer.
    expect(fingerprint(new Float32Array([9, 1, 2, 3, 4]).subarray(1))).toBe(fingerprint(a));
  });

  it('name a network by its content, not by a name it was given', () => {
    const layer = (bias: number) => [{ inputs: 2, outputs: 2, activation: 'linear' as const, weights: new Float32Array(4).fill(0.5), bias: new Float32Array(2).fill(bias) }];
    expect(layersFingerprint(layer(1))).toBe(layersFingerprint(layer(1)));
    expect(layersFingerprint(layer(1))).not.toBe(layersFingerprint(layer(2)));
    expect(layersFingerprint(layer(1))).not.toBe(layersFingerprint([{ ...layer(1)[0], activation: 'relu' }]));
  });
});

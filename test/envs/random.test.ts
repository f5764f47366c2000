import { describe, expect, it } from 'vitest';
import { SeededRandom, createRandom } from '../../src/envs/random.ts';

const draws = (rng: SeededRandom, count: number): number[] => Array.from({ length: count }, () => rng.next());

describe('SeededRandom (mulberry32)', () => {
  it('reproduces the mulberry32 reference outputs', () => {
    // mulberry32 has no paper; these outputs are the ones several independent public
    // implementations pin in their tests, and they agree with each other to the last bit.
    expect(draws(new SeededRandom(0), 5)).toEqual([
      0.26642920868471265, 0.0003297457005828619, 0.2232720274478197, 0.1462021479383111, 0.46732782293111086,
    ]);
    expect(draws(new SeededRandom(1), 5)).toEqual([
      0.6270739405881613, 0.002735721180215478, 0.5274470399599522, 0.9810509674716741, 0.9683778982143849,
    ]);
  });

  it('keeps its whole state in one uint32 that advances by the Weyl constant 0x6D2B79F5', () => {
    const rng = new SeededRandom(0);
    rng.next();
    expect(rng.state).toBe(0x6d2b79f5);
    rng.state = 0xffffffff;
    rng.next();
    expect(rng.state).toBe(0x6d2b79f4); // wraps modulo 2^32
  });

  it('reduces any seed modulo 2^32, so -1 and 2^32 - 1 are the same stream', () => {
    expect(draws(new SeededRandom(-1), 10)).toEqual(draws(new SeededRandom(0xffffffff), 10));
    expect(draws(new SeededRandom(2 ** 32 + 5), 10)).toEqual(draws(new SeededRandom(5), 10));
    expect(new SeededRandom(-1).next()).toBe(0.8964226141106337); // same reference outputs as above
  });

  it('gives the same sequence for the same seed and a different one for another seed', () => {
    expect(draws(createRandom(42), 100)).toEqual(draws(createRandom(42), 100));
    expect(draws(createRandom(42), 10)).not.toEqual(draws(createRandom(43), 10));
  });

  it('replays exactly from a saved state', () => {
    const rng = new SeededRandom(7);
    draws(rng, 13);
    const saved = rng.state;
    const first = draws(rng, 20);
    rng.state = saved;
    expect(draws(rng, 20)).toEqual(first);

    const other = new SeededRandom(999);
    other.state = saved;
    expect(draws(other, 20)).toEqual(first);
  });

  it('returns next() in [0, 1) with a mean near 1/2', () => {
    const values = draws(new SeededRandom(3), 20_000);
    expect(values.every((value) => value >= 0 && value < 1)).toBe(true);
    const mean = values.reduce((sum, value) => sum + value, 0) / values.length;
    // standard error of the mean is 1/sqrt(12·20000) ≈ 0.002; 0.01 is a 5-sigma band
    expect(Math.abs(mean - 0.5)).toBeLessThan(0.01);
  });

  it('draws uniform(lo, hi) inside [lo, hi)', () => {
    const rng = new SeededRandom(11);
    const values = Array.from({ length: 10_000 }, () => rng.uniform(-0.6, -0.4));
    expect(values.every((value) => value >= -0.6 && value < -0.4)).toBe(true);
    const mean = values.reduce((sum, value) => sum + value, 0) / values.length;
    expect(mean).toBeCloseTo(-0.5, 2);
  });

  it('draws int(n) from {0, …, n-1}, every value appearing', () => {
    const rng = new SeededRandom(5);
    const counts = new Array(6).fill(0);
    for (let i = 0; i < 6000; i += 1) {
      const value = rng.int(6);
      expect(Number.isInteger(value) && value >= 0 && value < 6).toBe(true);
      counts[value] += 1;
    }
    // each count is Binomial(6000, 1/6): mean 1000, sd ≈ 29; 850..1150 is beyond 5 sd
    for (const count of counts) expect(count > 850 && count < 1150).toBe(true);
    expect(rng.int(1)).toBe(0);
  });

  it('refuses arguments it cannot honour', () => {
    const rng = new SeededRandom(0);
    expect(() => rng.int(0)).toThrow(RangeError);
    expect(() => rng.int(2.5)).toThrow(RangeError);
    expect(() => rng.uniform(1, 0)).toThrow(RangeError);
    expect(() => {
      rng.state = -1;
    }).toThrow(RangeError);
    expect(() => {
      rng.state = 2 ** 32;
    }).toThrow(RangeError);
    expect(() => new SeededRandom(Number.NaN)).toThrow(RangeError);
  });
});

import { describe, expect, it } from 'vitest';
import { Random } from '../../src/agent/random.ts';
import { ReplayBuffer, createMinibatch } from '../../src/agent/replay.ts';

describe('ReplayBuffer', () => {
  it('fills, then wraps around overwriting the oldest transition first', () => {
    const replay = new ReplayBuffer(3, 2, 4);
    for (let t = 0; t < 5; t++) replay.add([t, 10 + t], t % 2, t * 0.5, [t + 1, 11 + t], t === 4);
    expect(replay.size).toBe(3);
    // Slots: t = 3 went to slot 0, t = 4 to slot 1, t = 2 still in slot 2.
    expect(Array.from(replay.states)).toEqual([3, 13, 4, 14, 2, 12]);
    expect(Array.from(replay.nextStates)).toEqual([4, 14, 5, 15, 3, 13]);
    expect(Array.from(replay.actions)).toEqual([1, 0, 0]);
    expect(Array.from(replay.rewards)).toEqual([1.5, 2, 1]);
    expect(Array.from(replay.terminals)).toEqual([0, 1, 0]);
    // The next add goes to slot 2, the oldest (t = 2).
    expect(replay.add([9, 9], 1, 0, [9, 9], false)).toBe(2);
  });

  it('samples only filled slots while filling, and every slot once full', () => {
    const replay = new ReplayBuffer(100, 1, 64);
    const rng = new Random(7);
    for (let t = 0; t < 10; t++) replay.add([t], 0, 0, [t], false);
    const seenWhileFilling = new Set<number>();
    for (let k = 0; k < 50; k++) for (const i of replay.sampleIndices(64, rng)) seenWhileFilling.add(i);
    expect(Math.min(...seenWhileFilling)).toBe(0);
    expect(Math.max(...seenWhileFilling)).toBe(9);
    expect(seenWhileFilling.size).toBe(10);

    for (let t = 10; t < 250; t++) replay.add([t], 0, 0, [t], false);
    const seenFull = new Set<number>();
    for (let k = 0; k < 200; k++) for (const i of replay.sampleIndices(64, rng)) seenFull.add(i);
    expect(seenFull.size).toBe(100);
    expect(Math.max(...seenFull)).toBe(99);
  });

  it('reuses one index buffer and gathers rows into preallocated arrays', () => {
    const replay = new ReplayBuffer(8, 2, 4);
    for (let t = 0; t < 8; t++) replay.add([t, -t], t % 3, t, [t + 0.5, -t - 0.5], t % 2 === 1);
    const rng = new Random(1);
    const first = replay.sampleIndices(4, rng);
    const second = replay.sampleIndices(4, rng);
    expect(second.buffer).toBe(first.buffer);

    const batch = createMinibatch(4, 2);
    replay.gather([5, 0, 7, 5], batch);
    expect(Array.from(batch.states)).toEqual([5, -5, 0, -0, 7, -7, 5, -5]);
    expect(Array.from(batch.nextStates)).toEqual([5.5, -5.5, 0.5, -0.5, 7.5, -7.5, 5.5, -5.5]);
    expect(Array.from(batch.actions)).toEqual([2, 0, 1, 2]);
    expect(Array.from(batch.rewards)).toEqual([5, 0, 7, 5]);
    expect(Array.from(batch.terminals)).toEqual([1, 0, 1, 1]);
  });

  it('refuses what would corrupt it', () => {
    const replay = new ReplayBuffer(4, 2, 2);
    expect(() => replay.sampleIndices(1, new Random(1))).toThrow(/empty/);
    expect(() => replay.add([1], 0, 0, [1, 2], false)).toThrow(/expected 2/);
    replay.add([1, 2], 0, 0, [1, 2], false);
    expect(() => replay.sampleIndices(3, new Random(1))).toThrow(/maxBatch/);
    expect(() => replay.gather([3], createMinibatch(2, 2))).toThrow(/not filled/);
  });
});

describe('Random', () => {
  it('repeats for a seed, stays in [0, 1), and spreads evenly', () => {
    const a = new Random(42);
    const b = new Random(42);
    const counts = new Array(10).fill(0);
    let mismatches = 0;
    let outside = 0;
    for (let i = 0; i < 100_000; i++) {
      const x = a.next();
      if (x !== b.next()) mismatches++;
      if (!(x >= 0 && x < 1)) outside++;
      else counts[Math.floor(x * 10)]++;
    }
    expect(mismatches).toBe(0);
    expect(outside).toBe(0);
    // 10,000 expected per bin; the standard deviation is about 95, so ±600 is > 6σ.
    for (const c of counts) expect(Math.abs(c - 10_000)).toBeLessThan(600);
    expect(new Random(43).next()).not.toBe(new Random(42).next());
  });
});

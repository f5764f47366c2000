import { describe, expect, it } from 'vitest';
import { discountedReturns } from '../../src/analysis/returns.ts';

// Row t of a step file holds R_{t+1}, the reward for row t's action, so returns[t] = G_t.
describe('discountedReturns', () => {
  it('Sutton & Barto (2018), Exercise 3.8: γ = 0.5, R1..R5 = −1, 2, 6, 3, 2 → G0..G4 = 2, 6, 8, 4, 2', () => {
    const returns = discountedReturns([-1, 2, 6, 3, 2], 0.5);
    expect(Array.from(returns)).toEqual([2, 6, 8, 4, 2]);
    // G5 = 0 is implied: the sum past the last row is empty, which is why G4 = R5 exactly.
    expect(returns.length).toBe(5);
  });

  it('Sutton & Barto (2018), Exercise 3.9: γ = 0.9, R1 = 2 then 7 forever → G1 = 70, G0 = 65', () => {
    // "Forever" as 2000 rewards: the tail left out is 70·0.9^1999 ≈ 1e-90, far under the tolerance.
    const rewards = new Float32Array(2000).fill(7);
    rewards[0] = 2;
    const returns = discountedReturns(rewards, 0.9);
    expect(Math.abs(returns[1] - 70)).toBeLessThan(1e-6); // 7 / (1 − 0.9)
    expect(Math.abs(returns[0] - 65)).toBeLessThan(1e-6); // 2 + 0.9 · 70
  });

  it.each([
    { name: 'γ = 1 sums the rewards', rewards: [1, 2, 3], gamma: 1, expected: [6, 5, 3] },
    { name: 'γ = 0 keeps the immediate reward', rewards: [1, 2, 3], gamma: 0, expected: [1, 2, 3] },
    { name: 'an empty episode has no returns', rewards: [], gamma: 0.5, expected: [] },
  ])('$name', ({ rewards, gamma, expected }) => {
    expect(Array.from(discountedReturns(rewards, gamma))).toEqual(expected);
  });

  it('lets a non-finite reward reach every earlier return, so a blow-up stays visible', () => {
    const returns = discountedReturns([1, NaN, 1], 0.5);
    expect(Number.isNaN(returns[0])).toBe(true);
    expect(Number.isNaN(returns[1])).toBe(true);
    expect(returns[2]).toBe(1);
  });
});

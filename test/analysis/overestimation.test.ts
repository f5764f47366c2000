/**
 * Why Double DQN exists, reproduced through the TD rules themselves. van Hasselt, Guez & Silver
 * (2016), AAAI, Theorem 2: when all true action values equal V*(s) and the estimates carry iid
 * U[−1, 1] errors over m actions, E[max_a Q̂(s, a)] − V*(s) = (m − 1)/(m + 1).
 */
import { describe, expect, it } from 'vitest';
import { createRandom } from '../../src/envs/random.ts';
import { tdSeries } from '../../src/analysis/td.ts';

const DRAWS = 200_000;
// The standard error of a mean of N draws is σ/√N. A single U[−1, 1] value has σ = 1/√3 ≈ 0.58 and
// the max of m of them has a smaller σ, so σ/√N ≤ 0.58/447 ≈ 0.0013; 0.01 is over 7 standard
// errors: a correct rule cannot miss it by chance, and the bias of the dqn rule (≥ 0.33) cannot hide in it.
const TOLERANCE = 0.01;

/** Mean of y − r over DRAWS steps whose true next-state values are all 0 and whose estimates are noise. */
function meanOverestimate(m: number, rule: 'dqn' | 'double', seed: number): number {
  const rng = createRandom(seed);
  const noise = () => Float32Array.from({ length: DRAWS * m }, () => rng.uniform(-1, 1));
  const targetNext = noise();
  // The double rule's point: the action is chosen by a second estimate whose errors are independent of the one that values it.
  const onlineNext = rule === 'double' ? noise() : null;
  const s = tdSeries(
    {
      n: DRAWS,
      actionCount: m,
      reward: new Float32Array(DRAWS),
      flags: new Uint8Array(DRAWS),
      q: new Float32Array(DRAWS * m),
      action: new Uint32Array(DRAWS),
      targetNext,
      onlineNext,
    },
    // γ = 1 and r = 0: y − r is the bootstrap value itself, the estimate of V*(s') = 0.
    { rule, gamma: 1, n: 1, truncation: 'bootstrap' },
  );
  let sum = 0;
  for (let t = 0; t < DRAWS; t++) sum += s.target[t] - s.reward[t];
  return sum / DRAWS;
}

describe('overestimation by the max (van Hasselt, Guez & Silver 2016, Theorem 2)', () => {
  it.each([
    { m: 2, expected: 1 / 3 }, // 0.333
    { m: 4, expected: 3 / 5 }, // 0.600
    { m: 10, expected: 9 / 11 }, // 0.818
  ])('dqn rule, m = $m: E[max_a Q̂] − V* = (m−1)/(m+1) ≈ $expected', ({ m, expected }) => {
    expect(Math.abs(meanOverestimate(m, 'dqn', 2016 + m) - expected)).toBeLessThan(TOLERANCE);
  });

  it.each([2, 4, 10])('double rule with independent online errors, m = %s: no overestimation on average', (m) => {
    expect(Math.abs(meanOverestimate(m, 'double', 4032 + m))).toBeLessThan(TOLERANCE);
  });
});

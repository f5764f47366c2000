/**
 * TD targets and errors, step by step. Sign convention: δ = y − Q(s, a) (REFERENCES.md).
 */
import { describe, expect, it } from 'vitest';
import { FLAG_TERMINAL, FLAG_TRUNCATED } from '../../formats/types.ts';
import { huber } from '../../src/analysis/losses.ts';
import { tdSeries, type TdInputs, type TdOptions, type TdSeries } from '../../src/analysis/td.ts';

const T = FLAG_TERMINAL;
const C = FLAG_TRUNCATED; // cut off by the time limit

function inputs(p: { reward: number[]; flags: number[]; q: number[][]; action: number[]; targetNext: number[][]; onlineNext?: number[][] }): TdInputs {
  return {
    n: p.reward.length,
    actionCount: p.q[0].length,
    reward: Float32Array.from(p.reward),
    flags: Uint8Array.from(p.flags),
    q: Float32Array.from(p.q.flat()),
    action: Uint32Array.from(p.action),
    targetNext: Float32Array.from(p.targetNext.flat()),
    onlineNext: p.onlineNext ? Float32Array.from(p.onlineNext.flat()) : null,
  };
}

const options = (o: Partial<TdOptions>): TdOptions => ({ rule: 'dqn', gamma: 0.99, n: 1, truncation: 'bootstrap', ...o });

// The worked target example of REFERENCES.md: r = 1, γ = 0.99, Q(s, a) = 2.5,
// target net at s' = [2, 3], online net at s' = [3.5, 1]. One step, action 0 taken.
const worked = (flags: number) => inputs({ reward: [1], flags: [flags], q: [[2.5, -7]], action: [0], targetNext: [[2, 3]], onlineNext: [[3.5, 1]] });

describe('tdSeries: the worked target example', () => {
  it.each([
    // Mnih et al. (2015), Nature 518, Methods, Algorithm 1: y = r + γ max_a' Q(s', a'; θ⁻) = 1 + 0.99·3.
    { rule: 'dqn' as const, y: 3.97, bootstrap: 3, delta: 1.47, huberLoss: 0.97, clipped: 1 },
    // van Hasselt, Guez & Silver (2016), AAAI, section "Double DQN" (from memory): the online net picks a' = 0 (3.5 > 1), the target net values it at 2.
    { rule: 'double' as const, y: 2.98, bootstrap: 2, delta: 0.48, huberLoss: 0.1152, clipped: 0 },
  ])('$rule: y = $y, δ = $delta, Huber = $huberLoss', ({ rule, y, bootstrap, delta, huberLoss, clipped }) => {
    const s = tdSeries(worked(0), options({ rule }));
    expect(s.target[0]).toBeCloseTo(y, 12);
    expect(s.bootstrap[0]).toBe(bootstrap);
    expect(s.discount[0]).toBe(0.99);
    expect(s.bootstrapped[0]).toBe(1);
    expect(s.qTaken[0]).toBe(2.5);
    expect(s.delta[0]).toBeCloseTo(delta, 12);
    expect(s.squared[0]).toBeCloseTo(delta * delta, 12);
    expect(s.huber[0]).toBeCloseTo(huberLoss, 12);
    // |δ| > 1 is where the error clip of Mnih et al. (2015) bites (Huber with δ = 1).
    expect(s.clipped[0]).toBe(clipped);
  });

  it.each(['dqn', 'double'] as const)('%s: a terminal step gives y = r, discount 0, no bootstrap (Mnih et al. 2015, Algorithm 1)', (rule) => {
    const s = tdSeries(worked(T), options({ rule }));
    expect(s.target[0]).toBe(1);
    expect(s.discount[0]).toBe(0);
    expect(s.bootstrapped[0]).toBe(0);
    expect(s.delta[0]).toBe(1 - 2.5);
  });

  it.each([
    // Pardo et al. (2018), ICML, "Time limits in reinforcement learning": a time-limit cut is not terminal, so it bootstraps.
    { truncation: 'bootstrap' as const, y: 1 + 0.99 * 3, bootstrapped: 1, discount: 0.99 },
    // Treating the cut as terminal is the mistake the option exists to show.
    { truncation: 'terminal' as const, y: 1, bootstrapped: 0, discount: 0 },
  ])('a truncated step with truncation "$truncation" has y = $y', ({ truncation, y, bootstrapped, discount }) => {
    const s = tdSeries(worked(C), options({ truncation }));
    expect(s.target[0]).toBeCloseTo(y, 12);
    expect(s.bootstrapped[0]).toBe(bootstrapped);
    expect(s.discount[0]).toBe(discount);
  });

  it('needs the online Q at the next states for the double rule', () => {
    expect(() => tdSeries({ ...worked(0), onlineNext: null }, options({ rule: 'double' }))).toThrow(/online Q/);
  });
});

describe('tdSeries: the pieces add up', () => {
  // An episode with errors on both sides of the clip, both signs, and a terminal end.
  const episode = inputs({
    reward: [0.5, -1, 2, 0, 1],
    flags: [0, 0, 0, 0, T],
    q: [[1, 2], [0.25, -0.5], [3, 4], [-2, 1], [0.5, 0.75]],
    action: [1, 0, 0, 1, 1],
    targetNext: [[0.5, 1], [4, 2], [-1, -3], [0, 0.25], [9, 9]],
    onlineNext: [[0, 1], [1, 0], [0, 1], [1, 0], [0, 1]],
  });
  it.each([
    { rule: 'dqn' as const, n: 1 },
    { rule: 'double' as const, n: 1 },
    { rule: 'nstep' as const, n: 2 },
    { rule: 'nstep' as const, n: 4 },
  ])('$rule (n = $n): y = rewardSum + discount·bootstrap, δ = y − Q(s, a), squared = δ², huber = ρ(δ)', ({ rule, n }) => {
    const s = tdSeries(episode, options({ rule, n, gamma: 0.9 }));
    expect(s.reward).toEqual(episode.reward);
    for (let t = 0; t < episode.n; t++) {
      expect(s.qTaken[t]).toBe(episode.q[t * 2 + episode.action[t]]);
      expect(s.target[t]).toBeCloseTo(s.rewardSum[t] + s.discount[t] * s.bootstrap[t], 12);
      expect(s.bootstrapped[t]).toBe(s.discount[t] > 0 ? 1 : 0);
      expect(s.delta[t]).toBe(s.target[t] - s.qTaken[t]);
      expect(s.squared[t]).toBe(s.delta[t] ** 2);
      expect(s.huber[t]).toBe(huber(s.delta[t], 1));
      expect(s.clipped[t]).toBe(Math.abs(s.delta[t]) > 1 ? 1 : 0);
    }
    // Nothing bootstraps past the terminal last step.
    expect(s.bootstrapped[4]).toBe(0);
    expect(s.target[4]).toBe(1);
  });

  it('makes the target NaN when a next-state value is NaN, so a blow-up stays visible', () => {
    const s = tdSeries(inputs({ reward: [1], flags: [0], q: [[0, 0]], action: [0], targetNext: [[NaN, 3]] }), options({}));
    expect(Number.isNaN(s.target[0])).toBe(true);
    expect(Number.isNaN(s.delta[0])).toBe(true);
  });

  it('under the double rule, makes the target NaN when the online Q at the next state holds a NaN, as the trainer does', () => {
    const s = tdSeries({ ...inputs({ reward: [1], flags: [0], q: [[0, 0]], action: [0], targetNext: [[2, 3]] }), onlineNext: Float32Array.of(NaN, 5) }, options({ rule: 'double' }));
    expect(Number.isNaN(s.target[0])).toBe(true);
    expect(Number.isNaN(s.delta[0])).toBe(true);
  });

  it('under the double rule, lets an online Q of +Infinity choose the action whose target value is used', () => {
    // argmax picks the infinite action 1; the target net values it at 3 (van Hasselt et al. 2016, eq. 4).
    const s = tdSeries({ ...inputs({ reward: [1], flags: [0], q: [[0, 0]], action: [0], targetNext: [[2, 3]] }), onlineNext: Float32Array.of(5, Infinity) }, options({ rule: 'double', gamma: 0.5 }));
    expect(s.bootstrap[0]).toBe(3);
    expect(s.target[0]).toBe(2.5);
  });
});

describe('tdSeries: n-step returns (Sutton & Barto 2018, eq. 7.1)', () => {
  // G_{t:t+n} = Σ_{k<n} γ^k R_{t+k+1} + γ^n max_a Q_target(S_{t+n}, a); γ = 0.5 keeps every value exact.
  // Row t of targetNext is Q_target at S_{t+1}, so the maxima are V(S1..S5) = 3, 2, 4, 6, 9;
  // row 4 is the episode's final state.
  const reward = [1, -2, 4, 0, 8];
  const targetNext = [[1, 3], [2, -1], [0, 4], [6, 5], [7, 9]];
  const q = [[0, 0], [0, 0], [0, 0], [0, 0], [0, 0]];
  const action = [0, 0, 0, 0, 0];
  const endsTerminal = inputs({ reward, flags: [0, 0, 0, 0, T], q, action, targetNext });
  const endsTruncated = inputs({ reward, flags: [0, 0, 0, 0, C], q, action, targetNext });

  it.each([
    // Terminal last step: a window that reaches it stops there and does not bootstrap.
    { episode: 'terminal end', steps: endsTerminal, n: 1, y: [1 + 0.5 * 3, -2 + 0.5 * 2, 4 + 0.5 * 4, 0 + 0.5 * 6, 8], discount: [0.5, 0.5, 0.5, 0.5, 0] },
    { episode: 'terminal end', steps: endsTerminal, n: 2, y: [1 - 1 + 0.25 * 2, -2 + 2 + 0.25 * 4, 4 + 0 + 0.25 * 6, 0 + 4, 8], discount: [0.25, 0.25, 0.25, 0, 0] },
    { episode: 'terminal end', steps: endsTerminal, n: 3, y: [1 - 1 + 1 + 0.125 * 4, -2 + 2 + 0 + 0.125 * 6, 4 + 0 + 2, 0 + 4, 8], discount: [0.125, 0.125, 0, 0, 0] },
    // Truncated last step: the window is cut at the episode's end, m = steps left, and bootstraps from the final state (Pardo et al. 2018).
    { episode: 'truncated end', steps: endsTruncated, n: 1, y: [2.5, -1, 6, 3, 8 + 0.5 * 9], discount: [0.5, 0.5, 0.5, 0.5, 0.5] },
    { episode: 'truncated end', steps: endsTruncated, n: 2, y: [0.5, 1, 5.5, 0 + 4 + 0.25 * 9, 8 + 0.5 * 9], discount: [0.25, 0.25, 0.25, 0.25, 0.5] },
    { episode: 'truncated end', steps: endsTruncated, n: 3, y: [1.5, 0.75, 4 + 0 + 2 + 0.125 * 9, 0 + 4 + 0.25 * 9, 8 + 0.5 * 9], discount: [0.125, 0.125, 0.125, 0.25, 0.5] },
  ])('$episode, n = $n: y = $y', ({ steps, n, y, discount }) => {
    const s = tdSeries(steps, { rule: 'nstep', gamma: 0.5, n, truncation: 'bootstrap' });
    expect(Array.from(s.target)).toEqual(y);
    expect(Array.from(s.discount)).toEqual(discount);
    expect(Array.from(s.bootstrapped)).toEqual(discount.map((d) => (d > 0 ? 1 : 0)));
  });

  it('treats the truncated end as terminal only when asked to', () => {
    for (const n of [1, 2, 3]) {
      const asTerminal = tdSeries(endsTruncated, { rule: 'nstep', gamma: 0.5, n, truncation: 'terminal' });
      const terminal = tdSeries(endsTerminal, { rule: 'nstep', gamma: 0.5, n, truncation: 'bootstrap' });
      expect(asTerminal.target).toEqual(terminal.target);
    }
  });

  it('with n = 1 is the dqn rule exactly', () => {
    const strip = ({ options: _options, ...pieces }: TdSeries) => pieces;
    for (const steps of [endsTerminal, endsTruncated]) {
      for (const truncation of ['bootstrap', 'terminal'] as const) {
        const nstep = tdSeries(steps, { rule: 'nstep', gamma: 0.5, n: 1, truncation });
        const dqn = tdSeries(steps, { rule: 'dqn', gamma: 0.5, n: 1, truncation });
        expect(strip(nstep)).toEqual(strip(dqn));
      }
    }
  });

  it.each([0, 1.5, -1])('refuses n = %s', (n) => {
    expect(() => tdSeries(endsTerminal, { rule: 'nstep', gamma: 0.5, n, truncation: 'bootstrap' })).toThrow(/n ≥ 1/);
  });
});

import { describe, expect, it } from 'vitest';
import { rowArgmax, rowMax, tdTargets } from '../../src/agent/targets.ts';

// The worked example of REFERENCES.md, computed from the two target formulas:
// r = 1, γ = 0.99, Q_target(s', ·) = [2, 3], Q_online(s', ·) = [3.5, 1].
const example = { gamma: 0.99, actionCount: 2, rewards: [1], nextQTarget: [2, 3], nextQOnline: [3.5, 1] };

describe('tdTargets', () => {
  it('DQN: y = r + γ max_a′ Q_target(s′, a′) — Mnih et al. 2015, Algorithm 1 (section from memory)', () => {
    const [y] = tdTargets({ ...example, rule: 'dqn', terminals: [0] });
    expect(y).toBeCloseTo(1 + 0.99 * 3, 5);
    expect(y).toBeCloseTo(3.97, 5);
  });

  it('Double DQN: y = r + γ Q_target(s′, argmax_a Q_online(s′, a)) — van Hasselt, Guez & Silver 2016, section "Double DQN" (from memory)', () => {
    const [y] = tdTargets({ ...example, rule: 'double', terminals: [0] });
    // The online net picks action 0 (3.5 > 1); the target net values it at 2.
    expect(y).toBeCloseTo(1 + 0.99 * 2, 5);
    expect(y).toBeCloseTo(2.98, 5);
  });

  it('terminal s′: y = r under both rules — Mnih et al. 2015, Algorithm 1 ("if episode terminates", from memory)', () => {
    for (const rule of ['dqn', 'double'] as const) {
      expect(Array.from(tdTargets({ ...example, rule, terminals: [1] }))).toEqual([1]);
    }
  });

  it('a truncated step is not terminal and bootstraps — Pardo et al. 2018, partial-episode bootstrapping (section from memory)', () => {
    // The replay stores truncated steps with terminal = 0; the target must use γ·Q(s′).
    const [y] = tdTargets({ ...example, rule: 'dqn', terminals: [0] });
    expect(y).not.toBe(1);
  });

  it('handles a minibatch row by row, with three actions', () => {
    const y = tdTargets({
      rule: 'double', gamma: 0.5, actionCount: 3,
      rewards: [0, 1, -1],
      terminals: [0, 1, 0],
      nextQTarget: [1, 2, 3, 9, 9, 9, 4, 5, 6],
      nextQOnline: [0, 0, 1, 9, 9, 9, 1, 7, 2],
    });
    // Row 0: online argmax 2 → target 3 → 0 + 0.5·3; row 1 terminal; row 2: argmax 1 → 5 → −1 + 2.5.
    expect(Array.from(y)).toEqual([1.5, 1, 1.5]);
  });

  it('keeps NaN visible instead of masking it (a debugging tool must show the first bad value)', () => {
    const dqn = tdTargets({ rule: 'dqn', gamma: 0.9, actionCount: 2, rewards: [1], terminals: [0], nextQTarget: [NaN, 5] });
    expect(dqn[0]).toBeNaN();
    const double = tdTargets({ rule: 'double', gamma: 0.9, actionCount: 2, rewards: [1], terminals: [0], nextQTarget: [1, 5], nextQOnline: [2, NaN] });
    expect(double[0]).toBeNaN();
    const terminal = tdTargets({ rule: 'dqn', gamma: 0.9, actionCount: 2, rewards: [1], terminals: [1], nextQTarget: [NaN, NaN] });
    expect(terminal[0]).toBe(1);
  });

  it("refuses the 'double' rule without online values", () => {
    expect(() => tdTargets({ rule: 'double', gamma: 0.9, actionCount: 2, rewards: [1], terminals: [0], nextQTarget: [1, 2] })).toThrow(/nextQOnline/);
  });
});

describe('rowMax / rowArgmax', () => {
  it('read one row of a row-major matrix; ties go to the lowest index', () => {
    const q = [1, 2, 7, 7, 0, -1];
    expect(rowMax(q, 2, 2)).toBe(7);
    expect(rowArgmax(q, 2, 2)).toBe(0);
    expect(rowArgmax(q, 4, 2)).toBe(0);
    expect(rowArgmax(q, 0, 3)).toBe(2);
    expect(rowArgmax([1, NaN], 0, 2)).toBe(-1);
  });
});

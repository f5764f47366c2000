import { describe, expect, it } from 'vitest';
import { actionGaps, maxQ } from '../../src/analysis/gap.ts';
import { greedyActions, greedyFlips } from '../../src/analysis/greedy.ts';

// One row per step, three actions. Each row names what it exercises; greedy is the index of the
// largest finite Q (the first on ties), gap is best minus second best over the finite values
// (Bellemare et al. 2016, AAAI, "Increasing the action gap", definition of the action gap; from memory),
// maxQ the largest finite value.
const table = [
  { row: 'plain', q: [1, 2, 0.5], greedy: 1, flip: 0, gap: 1, max: 2 },
  { row: 'tie for best: first index wins, gap 0', q: [2, 2, 1], greedy: 0, flip: 1, gap: 0, max: 2 },
  { row: 'NaN is ignored', q: [NaN, 1, 3], greedy: 2, flip: 1, gap: 2, max: 3 },
  { row: 'no finite Q: no greedy action', q: [NaN, NaN, NaN], greedy: -1, flip: 0, gap: NaN, max: NaN },
  { row: 'one finite Q: greedy, but no gap; no flip after an undefined row', q: [0, NaN, NaN], greedy: 0, flip: 0, gap: NaN, max: 0 },
  { row: '±Infinity is not finite either', q: [-1, 0.5, Infinity], greedy: 1, flip: 1, gap: 1.5, max: 0.5 },
  { row: 'all negative', q: [-3, -1, -2], greedy: 1, flip: 0, gap: 1, max: -1 },
  { row: 'tie for second: gap to it', q: [4, 1, 1], greedy: 0, flip: 1, gap: 3, max: 4 },
  { row: 'best found last', q: [1, 1, 5], greedy: 2, flip: 1, gap: 4, max: 5 },
];
const q = Float32Array.from(table.flatMap((r) => r.q));

describe('greedy actions, flips, action gaps and maxQ on a hand-made Q table', () => {
  const greedy = greedyActions(q, 3);
  const flips = greedyFlips(greedy);
  const gaps = actionGaps(q, 3);
  const maxima = maxQ(q, 3);
  it.each(table.map((r, t) => ({ ...r, t })))('step $t ($row): greedy $greedy, flip $flip, gap $gap, maxQ $max', ({ t, greedy: g, flip, gap, max }) => {
    expect(greedy[t]).toBe(g);
    expect(flips[t]).toBe(flip);
    expect(gaps[t]).toBe(gap); // toBe treats NaN as equal to NaN
    expect(maxima[t]).toBe(max);
  });

  it('never flips at step 0, and gives one entry per step', () => {
    expect(greedyFlips(Int32Array.of(1))[0]).toBe(0);
    expect([greedy.length, flips.length, gaps.length, maxima.length]).toEqual([table.length, table.length, table.length, table.length]);
  });

  it('does not flip into or out of a step without a greedy action', () => {
    expect(Array.from(greedyFlips(Int32Array.of(0, -1, 1, -1, -1, 1)))).toEqual([0, 0, 0, 0, 0, 0]);
  });

  it('handles a single action: greedy 0, no gap', () => {
    const one = Float32Array.of(3, -2);
    expect(Array.from(greedyActions(one, 1))).toEqual([0, 0]);
    expect(Array.from(actionGaps(one, 1))).toEqual([NaN, NaN]);
    expect(Array.from(maxQ(one, 1))).toEqual([3, -2]);
  });
});

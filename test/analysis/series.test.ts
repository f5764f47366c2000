import { describe, expect, it } from 'vitest';
import { episodeSeries, nextRecordedQ, nextStates } from '../../src/analysis/series.ts';
import { recordInMemory, trolleyHeader } from './recording.ts';

// Six steps, γ = 0.5 so every return is exact in binary. Step 3 has a NaN Q (for an action not
// taken) and step 5 an Infinity, both as a diverging network would write them.
const rewards = [1, 0, 2, -1, 4, 2];
const actions = [0, 2, 1, 0, 1, 1];
const qRows = [
  [1.5, 0.5, 2],
  [0.25, 1, 1.75],
  [3, 2.5, -1],
  [1, NaN, 0.5],
  [2, 4.5, 3],
  [Infinity, 1.25, 0],
];
const states = rewards.map((_, t) => [t / 4, -t / 8]);
const finalState = [1.5, -0.75];

const file = recordInMemory(trolleyHeader(0.5), 4, (rec) => {
  rewards.forEach((reward, t) => rec.step({ state: states[t], action: actions[t], reward, q: qRows[t], terminal: t === 5 }));
  rec.endEpisode({ failed: true, reason: 'mast fell', finalState });
});

describe('episodeSeries on a recording with non-finite Q', () => {
  const series = episodeSeries(file.readEpisode(0), file.header);

  it('finds the first non-finite value at step 3 and marks every such step', () => {
    expect(series.firstNonFinite).toBe(3);
    expect(Array.from(series.nonFinite)).toEqual([0, 0, 0, 1, 0, 1]);
  });

  it('gives G_t by hand (Sutton & Barto 2018, eq. 3.9: G_t = R_{t+1} + γ G_{t+1}, G_T = 0)', () => {
    // G5 = 2; G4 = 4 + 1 = 5; G3 = −1 + 2.5 = 1.5; G2 = 2 + 0.75 = 2.75; G1 = 0 + 1.375 = 1.375; G0 = 1 + 0.6875 = 1.6875.
    expect(Array.from(series.returns)).toEqual([1.6875, 1.375, 2.75, 1.5, 5, 2]);
    expect(series.returnIsLowerHorizon).toBe(false); // the episode ended by a terminal step
  });

  it('gives the value error Q(s_t, a_t) − G_t by hand', () => {
    // Q(s_t, a_t) = 1.5, 1.75, 2.5, 1, 4.5, 1.25: the NaN and the Infinity are in actions not taken.
    expect(Array.from(series.valueError)).toEqual([1.5 - 1.6875, 1.75 - 1.375, 2.5 - 2.75, 1 - 1.5, 4.5 - 5, 1.25 - 2]);
  });

  it('keeps the recorded Q and actions, and its greedy actions skip the non-finite values', () => {
    expect(series.qSource).toBe('recorded');
    expect(Array.from(series.actions)).toEqual(actions);
    expect(Array.from(series.greedy)).toEqual([2, 2, 0, 0, 1, 1]);
    expect(series.td).toBeNull(); // no target network given
  });

  it('takes the discount from the options when given', () => {
    const undiscounted = episodeSeries(file.readEpisode(0), file.header, { td: { gamma: 1 } });
    expect(Array.from(undiscounted.returns)).toEqual([8, 7, 7, 5, 6, 2]);
  });

  it('pairs each step with the state after it, the final state after the last', () => {
    expect(nextStates(file.readEpisode(0), 2)).toEqual(Float32Array.from([...states.slice(1), finalState].flat()));
  });

  it('pairs each step with the Q recorded after it, NaN after the last when no final Q was recorded', () => {
    const next = nextRecordedQ(file.readEpisode(0), 3);
    expect(Array.from(next.subarray(0, 15))).toEqual(qRows.slice(1).flat());
    expect(Array.from(next.subarray(15), Number.isNaN)).toEqual([true, true, true]);
  });
});

describe('episodeSeries with a target network', () => {
  it('bootstraps each step from the target at the next state and stops at the terminal one', () => {
    // A target that values every state at [1, 3, 2], so V(s') = 3 everywhere.
    const target = (_states: Float32Array, n: number) => Float32Array.from({ length: n * 3 }, (_, i) => [1, 3, 2][i % 3]);
    const series = episodeSeries(file.readEpisode(0), file.header, { target });
    const td = series.td!;
    expect(td.options).toEqual({ rule: 'dqn', gamma: 0.5, n: 3, truncation: 'bootstrap' });
    expect(Array.from(td.target)).toEqual([1 + 1.5, 0 + 1.5, 2 + 1.5, -1 + 1.5, 4 + 1.5, 2]);
    expect(Array.from(td.bootstrapped)).toEqual([1, 1, 1, 1, 1, 0]);
  });
});

/**
 * TD targets and errors for every step of an episode, with the pieces a user can check by hand.
 * Sign convention everywhere in episcope: δ = y − Q(s, a) (positive: the estimate was too low).
 *
 *   dqn     y_t = r_t + γ · max_a' Q_target(s_{t+1}, a')                       (Mnih et al. 2015)
 *   double  y_t = r_t + γ · Q_target(s_{t+1}, argmax_a' Q_online(s_{t+1}, a'))  (van Hasselt et al. 2016)
 *   nstep   y_t = Σ_{k<m} γ^k r_{t+k} + γ^m · max_a' Q_target(s_{t+m}, a')       (Sutton & Barto 2018, eq. 7.1)
 *
 * with m = min(n, steps left). A terminal step ends the sum and nothing bootstraps past it; a step
 * cut off by the time limit is not terminal and still bootstraps from the state after it (Pardo
 * et al. 2018), unless `truncation: 'terminal'` asks for the common mistake, to show its effect.
 * Row t's reward r_t is the reward for row t's action; s_{t+1} is row t+1's state, or the episode's
 * final state after its last row.
 */
import { huber } from './losses.ts';
import { rowArgmax, rowMax } from '../agent/targets.ts';
import { FLAG_TERMINAL, FLAG_TRUNCATED } from '../../formats/types.ts';

export type TdRule = 'dqn' | 'double' | 'nstep';
export const TD_RULES: readonly TdRule[] = ['dqn', 'double', 'nstep'];
export type TruncationHandling = 'bootstrap' | 'terminal';

export interface TdOptions {
  rule: TdRule;
  gamma: number;
  /** Steps summed before bootstrapping, for `nstep` (n ≥ 1; n = 1 is the dqn rule). */
  n: number;
  truncation: TruncationHandling;
}

export interface TdInputs {
  n: number;
  actionCount: number;
  reward: Float32Array;
  flags: Uint8Array;
  /** Q(s_t, ·) the estimate being judged (recorded, or recomputed from an online snapshot), N×A. */
  q: Float32Array;
  action: Uint32Array;
  /**
   * Q_target(s_{t+1}, ·) for t = 0…N−1, N×A: row t holds the target net at the state after row t
   * (row N−1: the episode's final state). NaN rows where that state is unknown.
   */
  targetNext: Float32Array;
  /** Q_online(s_{t+1}, ·), N×A, for `double`: chooses the action the target net values. */
  onlineNext: Float32Array | null;
}

/** Per-step pieces; every array has one entry per step. */
export interface TdSeries {
  options: TdOptions;
  reward: Float32Array;
  /** The discount that multiplies the bootstrap value: γ, γ^m, or 0 where nothing bootstraps. */
  discount: Float64Array;
  /** The bootstrap value V (max or chosen target Q at the bootstrap state); NaN where unknown, 0 unused. */
  bootstrap: Float64Array;
  /** Whether y includes a bootstrap term. */
  bootstrapped: Uint8Array;
  /** The discounted reward sum before the bootstrap (r_t for one-step rules). */
  rewardSum: Float64Array;
  target: Float64Array;
  qTaken: Float64Array;
  /** δ = y − Q(s, a). */
  delta: Float64Array;
  squared: Float64Array;
  huber: Float64Array;
  /** |δ| > 1: an error clip at ±1 (Huber with δ = 1) would bite. */
  clipped: Uint8Array;
}

export function tdSeries(inp: TdInputs, options: TdOptions): TdSeries {
  const { n: N, actionCount: A, reward, flags, q, action, targetNext, onlineNext } = inp;
  const { rule, gamma, truncation } = options;
  if (rule === 'double' && !onlineNext) throw new Error('the double rule needs the online Q at each next state');
  const steps = rule === 'nstep' ? options.n : 1;
  if (!Number.isInteger(steps) || steps < 1) throw new Error(`n-step needs n ≥ 1, got ${options.n}`);
  const discount = new Float64Array(N);
  const bootstrap = new Float64Array(N);
  const bootstrapped = new Uint8Array(N);
  const rewardSum = new Float64Array(N);
  const target = new Float64Array(N);
  const qTaken = new Float64Array(N);
  const delta = new Float64Array(N);
  const squared = new Float64Array(N);
  const huberLoss = new Float64Array(N);
  const clipped = new Uint8Array(N);
  // The flags after which nothing bootstraps: terminal always, a time-limit cut only when asked.
  const ends = FLAG_TERMINAL | (truncation === 'terminal' ? FLAG_TRUNCATED : 0);
  const double = rule === 'double';
  for (let t = 0; t < N; t++) {
    let sum = 0;
    let g = 1;
    let last = t;
    let stopped = false;
    for (let k = 0; k < steps && t + k < N; k++) {
      const j = t + k;
      sum += g * reward[j];
      g *= gamma;
      last = j;
      if ((flags[j] & ends) !== 0) {
        stopped = true;
        break;
      }
    }
    const qa = q[t * A + action[t]];
    rewardSum[t] = sum;
    qTaken[t] = qa;
    let y = sum;
    if (!stopped) {
      // V at the state after row `last`, under the rule's bootstrap. A NaN among the next-state
      // values makes the target NaN: a blow-up must stay visible downstream.
      const v = double ? doubleValue(targetNext, onlineNext!, last, A) : rowMax(targetNext, last * A, A);
      discount[t] = g;
      bootstrap[t] = v;
      bootstrapped[t] = 1;
      y = sum + g * v;
    }
    target[t] = y;
    const d = y - qa;
    delta[t] = d;
    squared[t] = d * d;
    huberLoss[t] = huber(d, 1);
    clipped[t] = Math.abs(d) > 1 ? 1 : 0;
  }
  return { options, reward, discount, bootstrap, bootstrapped, rewardSum, target, qTaken, delta, squared, huber: huberLoss, clipped };
}

/**
 * The double rule's bootstrap, chosen as the trainer chooses it (src/agent/targets.ts): a NaN among
 * the online Q makes the choice, and so the target, NaN; +Infinity is a largest value like any other.
 */
function doubleValue(targetNext: Float32Array, onlineNext: Float32Array, row: number, A: number): number {
  const a = rowArgmax(onlineNext, row * A, A);
  return a < 0 ? NaN : targetNext[row * A + a];
}

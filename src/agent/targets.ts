/**
 * TD targets for one minibatch, as a pure function over typed arrays so that the trainer, the tests
 * and the viewer's independent TD recomputation can all share one definition.
 *
 *   DQN (Mnih et al. 2015):                 y = r + γ · max_a' Q_target(s', a')
 *   Double DQN (van Hasselt et al. 2016):   y = r + γ · Q_target(s', argmax_a Q_online(s', a))
 *   terminal s' (either rule):              y = r
 *
 * A truncated step is not terminal and bootstraps like any other (Pardo et al. 2018).
 * Non-finite Q values are not hidden: a NaN anywhere in the row a target reads makes y NaN, so the
 * first bad value stays visible to whoever is debugging.
 */
import type { TargetRule } from './settings.ts';

export interface TargetInputs {
  rule: TargetRule;
  gamma: number;
  actionCount: number;
  /** r, one per transition. */
  rewards: ArrayLike<number>;
  /** 1 where s' is terminal (no bootstrap), 0 otherwise — including truncated steps. */
  terminals: ArrayLike<number>;
  /** Q_target(s', ·), row-major n × actionCount. */
  nextQTarget: ArrayLike<number>;
  /** Q_online(s', ·), row-major n × actionCount; needed only by the 'double' rule. */
  nextQOnline?: ArrayLike<number> | null;
}

export function tdTargets(inputs: TargetInputs, out: Float32Array = new Float32Array(inputs.rewards.length)): Float32Array {
  const { rule, gamma, actionCount: m, rewards, terminals, nextQTarget, nextQOnline } = inputs;
  if (rule === 'double' && !nextQOnline) throw new Error("tdTargets: rule 'double' needs nextQOnline");
  for (let i = 0; i < rewards.length; i++) {
    if (terminals[i]) {
      out[i] = rewards[i];
      continue;
    }
    let bootstrap: number;
    if (rule === 'dqn') {
      bootstrap = rowMax(nextQTarget, i * m, m);
    } else {
      const greedy = rowArgmax(nextQOnline!, i * m, m);
      bootstrap = greedy < 0 ? NaN : nextQTarget[i * m + greedy];
    }
    out[i] = rewards[i] + gamma * bootstrap;
  }
  return out;
}

/** max of row[from .. from+m); NaN if any entry is NaN. */
export function rowMax(values: ArrayLike<number>, from: number, m: number): number {
  let best = -Infinity;
  for (let a = 0; a < m; a++) {
    const v = values[from + a];
    if (Number.isNaN(v)) return NaN;
    if (v > best) best = v;
  }
  return best;
}

/** Index of the largest entry of row[from .. from+m); ties go to the lowest index (common practice); −1 if any entry is NaN. */
export function rowArgmax(values: ArrayLike<number>, from: number, m: number): number {
  let best = 0;
  for (let a = 0; a < m; a++) {
    const v = values[from + a];
    if (Number.isNaN(v)) return -1;
    if (v > values[from + best]) best = a;
  }
  return best;
}

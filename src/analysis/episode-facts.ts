/**
 * The facts one summary row shows for an episode, computed from its columns in one pass.
 */
import type { EpisodeSteps } from '../../formats/reader.ts';
import { FLAG_EXPLORED } from '../../formats/types.ts';
import { greedyActions, greedyFlips } from './greedy.ts';

export interface EpisodeFacts {
  episode: number;
  steps: number;
  return: number;
  outcome: string;
  failed: boolean | null;
  reason: string;
  mode: string;
  /** Smallest and largest finite Q over every step and action; null when there is none. */
  minQ: number | null;
  maxQ: number | null;
  /** Q-values and rewards that are NaN or ±Infinity. */
  nonFiniteQ: number;
  nonFiniteReward: number;
  /** First step with a non-finite Q or reward, or null. */
  firstNonFiniteStep: number | null;
  greedyFlips: number;
  exploredSteps: number;
  /** Distinct snapshot ids in force during the episode, in order of first use. */
  onlineIds: string[];
  targetIds: string[];
}

export function episodeFacts(e: EpisodeSteps, actionCount: number): EpisodeFacts {
  let minQ = Infinity;
  let maxQ = -Infinity;
  let nonFiniteQ = 0;
  let nonFiniteReward = 0;
  let firstNonFiniteStep: number | null = null;
  let explored = 0;
  for (let t = 0; t < e.n; t++) {
    let bad = false;
    for (let a = 0; a < actionCount; a++) {
      const v = e.q[t * actionCount + a];
      if (v - v !== 0) {
        nonFiniteQ++;
        bad = true;
      } else {
        if (v < minQ) minQ = v;
        if (v > maxQ) maxQ = v;
      }
    }
    const r = e.reward[t];
    if (r - r !== 0) {
      nonFiniteReward++;
      bad = true;
    }
    if (bad && firstNonFiniteStep === null) firstNonFiniteStep = e.step[t];
    if (e.flags[t] & FLAG_EXPLORED) explored++;
  }
  const flips = greedyFlips(greedyActions(e.q, actionCount));
  let flipCount = 0;
  for (let t = 0; t < flips.length; t++) flipCount += flips[t];
  const online: string[] = [];
  const target: string[] = [];
  for (const [, o, g] of e.weights) {
    if (o && !online.includes(o)) online.push(o);
    if (g && !target.includes(g)) target.push(g);
  }
  let ret = 0;
  for (let t = 0; t < e.n; t++) ret += e.reward[t];
  return {
    episode: e.episode,
    steps: e.n,
    return: e.end ? e.end.return : ret,
    outcome: e.end ? e.end.outcome : 'open',
    failed: e.end ? e.end.failed : null,
    reason: e.end?.reason ?? '',
    mode: e.end?.mode ?? '',
    minQ: minQ === Infinity ? null : minQ,
    maxQ: maxQ === -Infinity ? null : maxQ,
    nonFiniteQ,
    nonFiniteReward,
    firstNonFiniteStep,
    greedyFlips: flipCount,
    exploredSteps: explored,
    onlineIds: online,
    targetIds: target,
  };
}

/**
 * Everything episcope computes per step of one episode, in typed arrays of one entry per step.
 * Pure: the Q-networks come in as functions over a batch of states, so the CLI (TensorFlow.js in
 * Node) and the viewer (a Web Worker) run the same code.
 */
import type { EpisodeSteps } from '../../formats/reader.ts';
import type { Header } from '../../formats/types.ts';
import { actionGaps, maxQ } from './gap.ts';
import { greedyActions, greedyFlips } from './greedy.ts';
import { discountedReturns } from './returns.ts';
import { tdSeries, type TdOptions, type TdSeries } from './td.ts';

/** A Q-network as analysis sees it: row-major N×D states in, N×A Q-values out, one batch. */
export type QFunction = (states: Float32Array, n: number) => Float32Array;

export interface SeriesOptions {
  /** TD error against this target network; no TD series without one. */
  target?: QFunction | null;
  /** Recompute Q(s_t, ·) and the online choice at s_{t+1} from this network instead of the recording. */
  online?: QFunction | null;
  td?: Partial<TdOptions>;
}

export interface EpisodeSeries {
  episode: number;
  n: number;
  /** Q(s_t, ·) judged: recorded, or recomputed from the online snapshot (N×A). */
  q: Float32Array;
  qSource: 'recorded' | 'online snapshot';
  /** The action taken at each step, as recorded. */
  actions: Uint32Array;
  greedy: Int32Array;
  /** 1 where the greedy action differs from the previous step's. */
  flips: Uint8Array;
  gap: Float32Array;
  maxQ: Float32Array;
  /** Monte Carlo return G_t to the episode's end. */
  returns: Float64Array;
  /** True when the episode was cut off (truncated or unfinished): G_t is then a lower horizon. */
  returnIsLowerHorizon: boolean;
  /** Q(s_t, a_t) − G_t. */
  valueError: Float64Array;
  /** First step (row) with a non-finite Q or reward, or −1; `nonFinite[t]` marks every such row. */
  firstNonFinite: number;
  nonFinite: Uint8Array;
  td: TdSeries | null;
}

/** Rows 1…n−1 of an n×width array moved up one row, and `last` (or NaN where it is not recorded) after them. */
function nextRows(values: Float32Array, n: number, width: number, last: Float32Array | null | undefined): Float32Array {
  const next = new Float32Array(n * width);
  if (n > 1) next.set(values.subarray(width, n * width));
  if (n > 0) {
    if (last) next.set(last, (n - 1) * width);
    else next.fill(NaN, (n - 1) * width);
  }
  return next;
}

/** The state after each row, N×D: row t+1's state, or the episode's final state after its last row (NaN if not recorded). */
export function nextStates(e: EpisodeSteps, D: number): Float32Array {
  return nextRows(e.state, e.n, D, e.end?.finalState);
}

/**
 * The Q the online net recorded at the state after each row, N×A: row t+1's Q, or the episode's
 * final Q after its last row (NaN if not recorded). Without an online snapshot, this is how the
 * double rule learns the online net's choice at s_{t+1}.
 */
export function nextRecordedQ(e: EpisodeSteps, A: number): Float32Array {
  return nextRows(e.q, e.n, A, e.end?.finalQ);
}

export function episodeSeries(e: EpisodeSteps, header: Header, options: SeriesOptions = {}): EpisodeSeries {
  const D = header.stateDims.length;
  const A = header.actions.length;
  const N = e.n;
  const q = options.online ? options.online(e.state, N) : e.q;
  const greedy = greedyActions(q, A);
  const returns = discountedReturns(e.reward, options.td?.gamma ?? header.gamma);
  const valueError = new Float64Array(N);
  const nonFinite = new Uint8Array(N);
  let firstNonFinite = -1;
  for (let t = 0; t < N; t++) {
    valueError[t] = q[t * A + e.action[t]] - returns[t];
    let bad = e.reward[t] - e.reward[t] !== 0;
    for (let a = 0; a < A && !bad; a++) bad = q[t * A + a] - q[t * A + a] !== 0;
    if (bad) {
      nonFinite[t] = 1;
      if (firstNonFinite < 0) firstNonFinite = t;
    }
  }
  let td: TdSeries | null = null;
  if (options.target) {
    const next = nextStates(e, D);
    const targetNext = options.target(next, N);
    let onlineNext: Float32Array | null = null;
    const rule = options.td?.rule ?? 'dqn';
    if (rule === 'double') onlineNext = options.online ? options.online(next, N) : nextRecordedQ(e, A);
    td = tdSeries(
      { n: N, actionCount: A, reward: e.reward, flags: e.flags, q, action: e.action, targetNext, onlineNext },
      { rule, gamma: options.td?.gamma ?? header.gamma, n: options.td?.n ?? 3, truncation: options.td?.truncation ?? 'bootstrap' },
    );
  }
  return {
    episode: e.episode,
    n: N,
    q,
    qSource: options.online ? 'online snapshot' : 'recorded',
    actions: e.action,
    greedy,
    flips: greedyFlips(greedy),
    gap: actionGaps(q, A),
    maxQ: maxQ(q, A),
    returns,
    returnIsLowerHorizon: e.end?.outcome !== 'terminal',
    valueError,
    firstNonFinite,
    nonFinite,
    td,
  };
}

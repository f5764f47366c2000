import type { DenseLayer, Outcome, SnapshotRole } from '../../formats/types.ts';

/** One step as a trainer hands it to the recorder. Arrays may be typed or plain. */
export interface StepInput {
  state: ArrayLike<number>;
  action: number;
  /** Reward received for taking `action` in `state`. NaN and ±Infinity are kept and counted. */
  reward: number;
  /** Q(state, ·) of the online network, one per action. NaN and ±Infinity are kept and counted. */
  q: ArrayLike<number>;
  terminal?: boolean;
  truncated?: boolean;
  /** The action was drawn at random by ε-greedy rather than chosen greedily. */
  explored?: boolean;
  epsilon?: number;
  /** Values of the extra columns named in the header. */
  extras?: Record<string, number>;
}

export interface EpisodeEndInput {
  outcome?: Outcome;
  failed?: boolean;
  reason?: string;
  mode?: string;
  finalState?: ArrayLike<number>;
  finalQ?: ArrayLike<number>;
}

export interface SnapshotInput {
  role: SnapshotRole;
  trainingStep: number;
  layers: DenseLayer[];
  /** Whether these weights are now the ones in force for `role` (default true). */
  inForce?: boolean;
  /**
   * Write the weights into the file (default true). With false, only their id is computed and
   * put in force: the step blocks still say exactly when the weights changed, without the file
   * growing by a network at every change (a target synced every few updates).
   */
  store?: boolean;
}

export interface NoteInput {
  /** Defaults to the current episode. */
  episode?: number;
  from: number;
  to: number;
  text: string;
}

/** Counts a recorder keeps as it goes; non-finite values are evidence, so they are counted, not refused. */
export interface RecorderStats {
  steps: number;
  episodes: number;
  blocks: number;
  snapshots: number;
  nonFiniteQ: number;
  nonFiniteReward: number;
  bytesWritten: number;
}

export interface Recorder {
  /** Append one step to the current episode. Throws RecordError on bad input, leaving the file as it was. */
  step(input: StepInput): void;
  /** Close the current episode (flushes the open block). Returns the episode's index. */
  endEpisode(input?: EpisodeEndInput): number;
  /** Store a network's weights; returns its id (hash of the weights). */
  snapshot(input: SnapshotInput): string;
  note(input: NoteInput): void;
  /** Flush, write the index and trailer, close the sink. Further calls throw. */
  close(): void;
  readonly stats: RecorderStats;
  /** Index of the episode that the next step belongs to. */
  readonly currentEpisode: number;
}

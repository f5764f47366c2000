/**
 * The records of a step file (format versions 1 and 2), as the codec hands them to the rest of episcope.
 * formats/SPEC.md is the byte-level description; these types mirror its field names.
 */

/** The newest version: step blocks may be packed (SPEC.md §5.2). */
export const FORMAT_VERSION = 2;
/** A file without packed blocks is written as version 1, so that every version-1 reader still reads it. */
export const PLAIN_FORMAT_VERSION = 1;

export interface StateDimSpec {
  name: string;
  unit: string;
}

/** How state maps onto the drawing of the control system. */
export interface ControlSystemSpec {
  kind: string;
  title?: string;
  map: Record<string, number>;
  params?: Record<string, number>;
}

export interface Header {
  version: number;
  stateDims: StateDimSpec[];
  actions: string[];
  gamma: number;
  system: ControlSystemSpec;
  /** Names of extra f32 columns every step block carries. */
  extras: string[];
  /** Free-form facts about the run (settings, seeds, purpose). Must be MessagePack-encodable. */
  run: Record<string, unknown>;
  createdAt?: string;
}

export type Activation = 'linear' | 'relu' | 'tanh' | 'sigmoid' | 'elu' | 'softplus';
export const ACTIVATIONS: readonly Activation[] = ['linear', 'relu', 'tanh', 'sigmoid', 'elu', 'softplus'];

/** One dense layer: y = activation(x · W + b), W stored row-major as [inputs][outputs]. */
export interface DenseLayer {
  inputs: number;
  outputs: number;
  weights: Float32Array;
  bias: Float32Array;
  activation: Activation;
}

export type SnapshotRole = 'online' | 'target';

export interface Snapshot {
  role: SnapshotRole;
  trainingStep: number;
  /** Hex id: the first 16 hex digits of SHA-256 over the layers (SPEC.md, "Snapshot id"). */
  id: string;
  layers: DenseLayer[];
}

export type Outcome = 'terminal' | 'truncated' | 'ended';

export interface EpisodeEnd {
  episode: number;
  length: number;
  return: number;
  outcome: Outcome;
  failed: boolean;
  reason: string;
  /** 'train' (ε-greedy, learning) or 'eval' (greedy, no learning), or anything a writer chooses. */
  mode: string;
  /** Observation after the last action; needed to bootstrap a truncated last step. */
  finalState: Float32Array | null;
  /** Online Q at finalState, when the writer had it. */
  finalQ: Float32Array | null;
}

export interface Note {
  episode: number;
  from: number;
  to: number;
  text: string;
}

/** Flag bits of the `flags` column. */
export const FLAG_TERMINAL = 1;
export const FLAG_TRUNCATED = 2;
export const FLAG_EXPLORED = 4;

/** The weights in force from a row of a step block on: [rowInBlock, onlineId, targetId]. */
export type WeightsRun = [row: number, onlineId: string, targetId: string];

/**
 * A step block decoded into typed arrays (read-only: they may be views of the file's bytes). A block holds consecutive steps of one episode:
 * rows are steps firstStep, firstStep+1, …; state is row-major N×D and q row-major N×A.
 */
export interface StepColumns {
  n: number;
  episode: number;
  firstStep: number;
  state: Float32Array;
  action: Uint32Array;
  reward: Float32Array;
  flags: Uint8Array;
  q: Float32Array;
  /** NaN where a step had no ε; null when no step in the block had one. */
  epsilon: Float32Array | null;
  extras: Record<string, Float32Array>;
  /** Sorted by row; the first run starts at row 0. */
  weights: WeightsRun[];
}

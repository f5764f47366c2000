/**
 * Messages between the viewer and its analysis worker. Step data travels as typed arrays
 * (transferred, never copied element by element); the worker runs the same src/analysis code as
 * the CLI, so every number on screen equals the one `episcope td` prints.
 */
import type { DenseLayer } from '../../formats/types.ts';
import type { EpisodeVerdict } from '../../src/analysis/analyse.ts';
import type { EpisodeSeries } from '../../src/analysis/series.ts';
import type { Suspect } from '../../src/analysis/suspects.ts';
import type { SyncCadence } from '../../src/analysis/target-age.ts';
import type { TdOptions, TdSeries } from '../../src/analysis/td.ts';

export interface TargetNet {
  /** What the user picked, for display: "trolley.steps#target (training step 22800)". */
  source: string;
  id: string;
  layers: DenseLayer[];
}

/**
 * Which target network the TD error is measured against: none; the target snapshot in force at
 * the start of each episode (resolved in the worker from the file's own snapshots); or one network.
 */
export type TargetSpec = { kind: 'none' } | { kind: 'in-force' } | { kind: 'net'; net: TargetNet };

export type ToWorker =
  | { type: 'open'; key: string; name: string; bytes: ArrayBuffer }
  | { type: 'analyse'; key: string; request: number; target: TargetSpec; td: TdOptions }
  | { type: 'series'; key: string; request: number; episode: number; target: TargetSpec; td: TdOptions };

/** The per-step series of one episode, as the lanes and the Readout need them. */
export interface SeriesPayload
  extends Pick<EpisodeSeries, 'episode' | 'n' | 'greedy' | 'flips' | 'gap' | 'maxQ' | 'returns' | 'returnIsLowerHorizon' | 'valueError' | 'firstNonFinite'> {
  /** The target network the TD series used (for in-force: the one of this episode), or null. */
  targetSource: string | null;
  /** Per-step target age (training steps since the target weights last changed). */
  targetAge: Uint32Array;
  /** The TD pieces of src/analysis/td.ts, less what the viewer already has (options, rewards). */
  td: Omit<TdSeries, 'options' | 'reward'> | null;
}

export interface AnalysisPayload {
  rMax: number;
  bound: number;
  cadence: SyncCadence;
  episodes: EpisodeVerdict[];
  suspects: Suspect[];
  tdRule: string | null;
}

export type FromWorker =
  | { type: 'opened'; key: string }
  | { type: 'analysis'; key: string; request: number; analysis: AnalysisPayload }
  | { type: 'series'; key: string; request: number; series: SeriesPayload }
  | { type: 'error'; key: string; request: number | null; message: string };

/**
 * A whole step file judged at once: every episode's series, its suspects, the ranked list and a
 * verdict per episode. Series are computed one episode at a time and dropped, so memory stays
 * bounded by the longest episode, not the file.
 */
import type { StepFile } from '../../formats/reader.ts';
import { episodeSeries, type EpisodeSeries, type QFunction } from './series.ts';
import { episodeSuspects, rankSuspects, valueBound, type Suspect } from './suspects.ts';
import { targetTimeline, type SyncCadence } from './target-age.ts';
import type { TdOptions } from './td.ts';

export interface FileAnalysisOptions {
  target?: QFunction | null;
  /** A target network per episode (the one in force, say); takes precedence over `target`. */
  targetFor?: (episode: number) => QFunction | null;
  online?: QFunction | null;
  td?: Partial<TdOptions>;
}

export interface EpisodeVerdict {
  episode: number;
  mode: string;
  steps: number;
  return: number | null;
  outcome: string;
  verdict: 'fail' | 'ok' | 'open';
  reason: string;
  suspects: number;
  worst: Suspect | null;
}

export interface FileAnalysis {
  rMax: number;
  gamma: number;
  bound: number;
  cadence: SyncCadence;
  episodes: EpisodeVerdict[];
  suspects: Suspect[];
  tdRule: string | null;
}

/** Largest finite |reward| in the file: the scale the bound and the thresholds are measured in. */
export function largestReward(file: StepFile): number {
  let m = 0;
  for (let i = 0; i < file.blocks.length; i++) {
    const r = file.readBlock(i).reward;
    for (let t = 0; t < r.length; t++) {
      const a = Math.abs(r[t]);
      if (a > m && a !== Infinity) m = a;
    }
  }
  return m;
}

export function analyseFile(file: StepFile, options: FileAnalysisOptions = {}, each?: (s: EpisodeSeries) => void): FileAnalysis {
  const gamma = options.td?.gamma ?? file.header.gamma;
  const rMax = largestReward(file);
  const ctx = { actions: file.header.actions, gamma, rMax };
  const all: Suspect[] = [];
  const episodes: EpisodeVerdict[] = [];
  for (const info of file.episodes) {
    const steps = file.readEpisode(info.episode);
    const target = options.targetFor ? options.targetFor(info.episode) : (options.target ?? null);
    const series = episodeSeries(steps, file.header, { ...options, target });
    each?.(series);
    const found = rankSuspects(episodeSuspects(series, info.end, steps.step, ctx));
    all.push(...found);
    const end = info.end;
    episodes.push({
      episode: info.episode,
      mode: end?.mode ?? '',
      steps: info.length,
      return: end?.return ?? null,
      outcome: end?.outcome ?? 'open',
      verdict: !end ? 'open' : end.failed ? 'fail' : 'ok',
      reason: end?.reason ?? '',
      suspects: found.length,
      worst: found[0] ?? null,
    });
  }
  return {
    rMax,
    gamma,
    bound: valueBound(rMax, gamma),
    cadence: targetTimeline(file).cadence,
    episodes,
    suspects: rankSuspects(all),
    tdRule: options.target || options.targetFor ? (options.td?.rule ?? 'dqn') : null,
  };
}

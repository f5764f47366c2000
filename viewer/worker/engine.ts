/**
 * What the analysis worker does, as plain functions: open step files from bytes, judge a whole file,
 * compute one episode's series. The worker runs them off the main thread; a clip page, which opens
 * from file:// where no worker can be started, runs the same functions in-thread.
 */
import { openStepFile, type StepFile } from '../../formats/reader.ts';
import { bytesSource } from '../../formats/source.ts';
import type { DenseLayer } from '../../formats/types.ts';
import { analyseFile } from '../../src/analysis/analyse.ts';
import { episodeSeries, type QFunction } from '../../src/analysis/series.ts';
import { targetTimeline, type TargetTimeline } from '../../src/analysis/target-age.ts';
import type { TdOptions, TdSeries } from '../../src/analysis/td.ts';
import { forwardDense } from '../../src/net/forward.ts';
import { ForwardCache, layersFingerprint } from './forward-cache.ts';
import type { AnalysisPayload, SeriesPayload, TargetSpec } from './protocol.ts';

interface OpenFile {
  file: StepFile;
  timeline: TargetTimeline | null;
  layersById: Map<string, DenseLayer[] | null>;
}

export class AnalysisEngine {
  private files = new Map<string, OpenFile>();
  /** The series and the suspects of an episode share one forward pass of its target network. */
  private forward = new ForwardCache();

  open(key: string, name: string, bytes: Uint8Array): void {
    this.files.set(key, { file: openStepFile(bytesSource(bytes), name), timeline: null, layersById: new Map() });
  }

  analyse(key: string, target: TargetSpec, td: TdOptions): AnalysisPayload {
    const entry = this.entry(key);
    return analyseFile(entry.file, { targetFor: (episode) => this.targetFor(key, entry, target, episode)?.q ?? null, td });
  }

  series(key: string, episode: number, target: TargetSpec, td: TdOptions): SeriesPayload {
    const entry = this.entry(key);
    const steps = entry.file.readEpisode(episode);
    const net = this.targetFor(key, entry, target, episode);
    const s = episodeSeries(steps, entry.file.header, { target: net?.q ?? null, td });
    entry.timeline ??= targetTimeline(entry.file);
    const age = entry.timeline.age.get(episode) ?? new Uint32Array(s.n);
    return {
      episode: s.episode,
      n: s.n,
      greedy: s.greedy,
      flips: s.flips,
      gap: s.gap,
      maxQ: s.maxQ,
      returns: s.returns,
      returnIsLowerHorizon: s.returnIsLowerHorizon,
      valueError: s.valueError,
      firstNonFinite: s.firstNonFinite,
      targetSource: net?.source ?? null,
      targetAge: Uint32Array.from(age),
      td: s.td ? withoutInputs(s.td) : null,
    };
  }

  private entry(key: string): OpenFile {
    const e = this.files.get(key);
    if (!e) throw new Error(`no open file ${key}`);
    return e;
  }

  /** The target network for an episode under a spec, with a description, or null. */
  private targetFor(key: string, entry: OpenFile, spec: TargetSpec, episode: number): { q: QFunction; source: string } | null {
    if (spec.kind === 'none') return null;
    if (spec.kind === 'net') return { q: this.cachedForward(key, episode, spec.net.layers), source: spec.net.source };
    const info = entry.file.episode(episode);
    if (info.blocks.length === 0) return null;
    const id = entry.file.readBlock(info.blocks[0]).weights[0]?.[2] ?? '';
    if (!id) return null;
    let layers = entry.layersById.get(id);
    if (layers === undefined) {
      const ref = entry.file.snapshotById(id);
      layers = ref ? entry.file.readSnapshot(ref).layers : null;
      entry.layersById.set(id, layers);
    }
    if (!layers) return null; // weights named in force but never stored
    const ref = entry.file.snapshotById(id)!;
    return { q: this.cachedForward(key, episode, layers), source: `target in force (training step ${ref.trainingStep}, id ${id})` };
  }

  /**
   * The network as a Q-function whose answers are kept per file, episode and network content
   * (not its id: every model folder is called 'model').
   */
  private cachedForward(key: string, episode: number, layers: DenseLayer[]): QFunction {
    return this.forward.wrap(`${key}\u0000${episode}\u0000${layersFingerprint(layers)}`, (states, n) => forwardDense(layers, states, n));
  }
}

/** The TD pieces to send: the options and rewards travel with the request and the step file already. */
function withoutInputs(td: TdSeries): Omit<TdSeries, 'options' | 'reward'> {
  const { options: _options, reward: _reward, ...pieces } = td;
  return pieces;
}

/** The session's view of analysis: a worker, or the engine in-thread. */
export interface Analysis {
  open(key: string, name: string, bytes: Uint8Array): Promise<void>;
  analyse(key: string, target: TargetSpec, td: TdOptions): Promise<AnalysisPayload>;
  series(key: string, episode: number, target: TargetSpec, td: TdOptions): Promise<SeriesPayload>;
}

/** In-thread analysis, for pages that cannot start a worker. Answers on a later task, as a worker would. */
export class InlineAnalysis implements Analysis {
  private engine = new AnalysisEngine();
  async open(key: string, name: string, bytes: Uint8Array): Promise<void> {
    this.engine.open(key, name, bytes);
  }
  async analyse(key: string, target: TargetSpec, td: TdOptions): Promise<AnalysisPayload> {
    await new Promise((r) => setTimeout(r, 0));
    return this.engine.analyse(key, target, td);
  }
  async series(key: string, episode: number, target: TargetSpec, td: TdOptions): Promise<SeriesPayload> {
    await new Promise((r) => setTimeout(r, 0));
    return this.engine.series(key, episode, target, td);
  }
}

/// <reference lib="webworker" />
/**
 * The viewer's analysis worker: opens step files from bytes and computes per-step series and the
 * ranked suspects, so the screen never stalls. Target networks run on the plain-JS forward pass,
 * which needs no WASM files and is exact to float32 products summed in float64.
 */
import { openStepFile, type StepFile } from '../../formats/reader.ts';
import { bytesSource } from '../../formats/source.ts';
import { analyseFile } from '../../src/analysis/analyse.ts';
import { episodeSeries, type QFunction } from '../../src/analysis/series.ts';
import { targetTimeline, type TargetTimeline } from '../../src/analysis/target-age.ts';
import { forwardDense } from '../../src/net/forward.ts';
import type { FromWorker, SeriesPayload, TargetSpec, ToWorker } from './protocol.ts';
import type { DenseLayer } from '../../formats/types.ts';

interface OpenFile {
  file: StepFile;
  timeline: TargetTimeline | null;
  layersById: Map<string, DenseLayer[] | null>;
}
const files = new Map<string, OpenFile>();

const post = (m: FromWorker, transfer: Transferable[] = []) => (self as unknown as Worker).postMessage(m, transfer);

/** The target network for an episode under a spec, with a description, or null. */
function targetFor(entry: OpenFile, spec: TargetSpec, episode: number): { q: QFunction; source: string } | null {
  if (spec.kind === 'none') return null;
  if (spec.kind === 'net') return { q: (states, n) => forwardDense(spec.net.layers, states, n), source: spec.net.source };
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
  const l = layers;
  return { q: (states, n) => forwardDense(l, states, n), source: `target in force (training step ${ref.trainingStep}, id ${id})` };
}

self.onmessage = (ev: MessageEvent<ToWorker>) => {
  const m = ev.data;
  try {
    if (m.type === 'open') {
      files.set(m.key, { file: openStepFile(bytesSource(new Uint8Array(m.bytes)), m.name), timeline: null, layersById: new Map() });
      post({ type: 'opened', key: m.key });
      return;
    }
    const entry = files.get(m.key);
    if (!entry) throw new Error(`no open file ${m.key}`);
    if (m.type === 'analyse') {
      const a = analyseFile(entry.file, { targetFor: (episode) => targetFor(entry, m.target, episode)?.q ?? null, td: m.td });
      post({ type: 'analysis', key: m.key, request: m.request, analysis: a });
      return;
    }
    if (m.type === 'series') {
      const steps = entry.file.readEpisode(m.episode);
      const target = targetFor(entry, m.target, m.episode);
      const s = episodeSeries(steps, entry.file.header, { target: target?.q ?? null, td: m.td });
      entry.timeline ??= targetTimeline(entry.file);
      const age = entry.timeline.age.get(m.episode) ?? new Uint32Array(s.n);
      const series: SeriesPayload = {
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
        targetSource: target?.source ?? null,
        targetAge: Uint32Array.from(age),
        td: s.td
          ? {
              discount: s.td.discount,
              bootstrap: s.td.bootstrap,
              bootstrapped: s.td.bootstrapped,
              rewardSum: s.td.rewardSum,
              target: s.td.target,
              qTaken: s.td.qTaken,
              delta: s.td.delta,
              squared: s.td.squared,
              huber: s.td.huber,
              clipped: s.td.clipped,
            }
          : null,
      };
      const transfer = [series.greedy, series.flips, series.gap, series.maxQ, series.returns, series.valueError, series.targetAge, ...(series.td ? Object.values(series.td) : [])].map((a) => a.buffer);
      post({ type: 'series', key: m.key, request: m.request, series }, transfer);
    }
  } catch (e) {
    post({ type: 'error', key: m.key, request: 'request' in m ? m.request : null, message: (e as Error).message });
  }
};

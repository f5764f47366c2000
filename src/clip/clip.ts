/**
 * A clip: a short segment of one episode written as a step file of its own, to hand to a colleague.
 * Every number at a step of the clip equals the number at the same step of the source: steps keep
 * their episode and step indices, the K steps after the chosen range come along so that n-step
 * targets can be recomputed, and the snapshots the clip's TD errors need come along too. The header's
 * `run.clip` says where it came from (the source's SHA-256, episode, range). DOM-free and Node-free:
 * the CLI writes clips to files, the viewer to memory.
 */
import type { EpisodeSteps, StepFile } from '../../formats/reader.ts';
import type { SnapshotRef } from '../../formats/index-record.ts';
import { actionArrayFor } from '../../formats/records.ts';
import type { Header, Snapshot, WeightsRun } from '../../formats/types.ts';
import { StepFileWriter, type ByteSink } from '../../formats/writer.ts';

export class ClipError extends Error {
  override readonly name = 'ClipError';
}

export interface ClipRequest {
  episode: number;
  /** First and last step index of the segment, inclusive. */
  from: number;
  to: number;
  /** Steps after `to` kept for n-step targets (default 3; fewer when the episode ends sooner). */
  context?: number;
  /** Snapshots to carry besides those in force during the clip (the chosen target, an online one). */
  snapshots?: Snapshot[];
  title?: string;
  note?: string;
  /** The source's name as the user knows it. */
  sourceName: string;
  compress?: boolean;
}

export interface ClipProvenance {
  source: string;
  sourceSha256: string;
  episode: number;
  from: number;
  to: number;
  /** Last step included, counting the context steps. */
  through: number;
  context: number;
  title: string;
  createdAt: string;
}

export interface ClipSummary {
  provenance: ClipProvenance;
  steps: number;
  snapshots: number;
}

/** Check a request against the source; the message says what range exists. */
export function checkClipRequest(source: StepFile, req: ClipRequest): { steps: EpisodeSteps; firstRow: number; lastRow: number; throughRow: number } {
  const known = source.episodes.map((e) => e.episode);
  if (!known.includes(req.episode)) {
    throw new ClipError(`${source.name}: no episode ${req.episode} (episodes ${known.length ? `${known[0]}..${known[known.length - 1]}` : 'none'})`);
  }
  const steps = source.readEpisode(req.episode);
  if (steps.n === 0) throw new ClipError(`${source.name}: episode ${req.episode} has no steps to clip`);
  const first = steps.step[0];
  const last = steps.step[steps.n - 1];
  if (!Number.isInteger(req.from) || !Number.isInteger(req.to)) throw new ClipError('the range needs whole step indices');
  if (req.to < req.from) throw new ClipError(`the range ${req.from}..${req.to} is empty: --to must be at or after --from`);
  if (req.from < first || req.to > last) {
    throw new ClipError(`the range ${req.from}..${req.to} is outside episode ${req.episode}, which has steps ${first}..${last}`);
  }
  const context = req.context ?? 3;
  if (!Number.isInteger(context) || context < 0) throw new ClipError(`context ${context} is not a whole number of steps ≥ 0`);
  const firstRow = steps.step.indexOf(req.from);
  const lastRow = steps.step.indexOf(req.to);
  if (firstRow < 0 || lastRow < 0) throw new ClipError(`episode ${req.episode} has a hole in ${req.from}..${req.to} (a damaged block was dropped)`);
  return { steps, firstRow, lastRow, throughRow: Math.min(steps.n - 1, lastRow + context) };
}

export function writeClip(source: StepFile, req: ClipRequest, sink: ByteSink): ClipSummary {
  const { steps, firstRow, lastRow, throughRow } = checkClipRequest(source, req);
  const h = source.header;
  const D = h.stateDims.length;
  const A = h.actions.length;
  const n = throughRow - firstRow + 1;
  const provenance: ClipProvenance = {
    source: req.sourceName,
    sourceSha256: source.sha256(),
    episode: req.episode,
    from: req.from,
    to: req.to,
    through: steps.step[throughRow],
    context: throughRow - lastRow,
    title: req.title ?? '',
    createdAt: new Date().toISOString(),
  };
  const header: Header = { ...h, run: { ...h.run, clip: provenance }, createdAt: provenance.createdAt };
  const writer = new StepFileWriter(sink, header, req.compress ?? true);

  // Weights runs of the clip's rows, relative to its first row; the first run starts at row 0.
  const weights: WeightsRun[] = [];
  for (const [row, online, target] of steps.weights) {
    const r = Math.max(0, row - firstRow);
    if (row > throughRow) break;
    if (weights.length && weights[weights.length - 1][0] === r) weights[weights.length - 1] = [r, online, target];
    else weights.push([r, online, target]);
  }

  // Snapshots first, so that every id a block names is already in the file.
  const wanted = new Map<string, Snapshot>();
  for (const snap of req.snapshots ?? []) wanted.set(`${snap.role}:${snap.id}`, snap);
  for (const [, online, target] of weights) {
    for (const [role, id] of [['online', online], ['target', target]] as const) {
      if (!id || wanted.has(`${role}:${id}`)) continue;
      const ref: SnapshotRef | undefined = [...source.snapshots].reverse().find((s) => s.id === id && s.role === role) ?? source.snapshotById(id) ?? undefined;
      if (ref) wanted.set(`${role}:${id}`, { ...source.readSnapshot(ref), role });
    }
  }
  for (const snap of wanted.values()) writer.writeSnapshot(snap);

  const action = actionArrayFor(A, n);
  action.set(steps.action.subarray(firstRow, throughRow + 1));
  writer.writeBlock({
    n,
    episode: req.episode,
    firstStep: steps.step[firstRow],
    state: steps.state.slice(firstRow * D, (throughRow + 1) * D),
    action,
    reward: steps.reward.slice(firstRow, throughRow + 1),
    flags: steps.flags.slice(firstRow, throughRow + 1),
    q: steps.q.slice(firstRow * A, (throughRow + 1) * A),
    epsilon: steps.epsilon ? steps.epsilon.slice(firstRow, throughRow + 1) : null,
    extras: Object.fromEntries(Object.entries(steps.extras).map(([k, v]) => [k, v.slice(firstRow, throughRow + 1)])),
    weights,
  });

  // The state after the clip's last row: the next row of the source, or the episode's own final state.
  const reachesEnd = throughRow === steps.n - 1;
  const end = steps.end;
  let ret = 0;
  for (let t = firstRow; t <= throughRow; t++) ret += steps.reward[t];
  writer.writeEpisodeEnd({
    episode: req.episode,
    length: n,
    return: ret,
    outcome: reachesEnd && end ? end.outcome : 'ended',
    failed: reachesEnd && end ? end.failed : false,
    reason: reachesEnd && end ? end.reason : `clip ends at step ${provenance.through}`,
    mode: end?.mode ?? '',
    finalState: reachesEnd ? (end?.finalState ?? null) : steps.state.slice((throughRow + 1) * D, (throughRow + 2) * D),
    finalQ: reachesEnd ? (end?.finalQ ?? null) : steps.q.slice((throughRow + 1) * A, (throughRow + 2) * A),
  });
  const text = [req.title, req.note].filter((x) => x && x.length).join('\n\n');
  if (text) writer.writeNote({ episode: req.episode, from: req.from, to: req.to, text });
  writer.finish();
  return { provenance, steps: n, snapshots: wanted.size };
}

/** The provenance a clip's header carries, or null for a file that is not a clip. */
export function clipProvenance(header: Header): ClipProvenance | null {
  const c = (header.run as { clip?: unknown }).clip;
  if (typeof c !== 'object' || c === null) return null;
  const p = c as Record<string, unknown>;
  return typeof p.source === 'string' && typeof p.sourceSha256 === 'string' && typeof p.episode === 'number' ? (p as unknown as ClipProvenance) : null;
}

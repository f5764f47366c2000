/**
 * Everything the viewer shows, in one place: the open files, the episode and step, the lanes' view,
 * playback, the chosen target network and TD rule, the in/out marks. Step data is `$state.raw`:
 * typed arrays of a million steps must not be deep-proxied, only replaced.
 */
import { openStepFile, type EpisodeSteps, type StepFile } from '../../formats/reader.ts';
import { bytesSource } from '../../formats/source.ts';
import type { TdOptions } from '../../src/analysis/td.ts';
import type { AnalysisPayload, SeriesPayload, TargetNet, TargetSpec } from '../worker/protocol.ts';
import type { Analysis } from '../worker/engine.ts';
import { decodeHash, encodeHash } from './hash.ts';

export interface LoadedFile {
  key: string;
  name: string;
  bytes: Uint8Array;
  file: StepFile;
}

/** What the target picker offers: none, the one in force per episode, a snapshot of the file, or a loaded network. */
export type TargetChoice = { kind: 'none' } | { kind: 'in-force' } | { kind: 'snapshot'; index: number } | { kind: 'external'; index: number };

export class Session {
  files = $state.raw<LoadedFile[]>([]);
  externals = $state.raw<TargetNet[]>([]);
  fileIndex = $state(0);
  episode = $state(-1);
  /** Row of the current step within the episode's columns (the step index is `steps.step[row]`). */
  row = $state(0);
  view = $state({ from: 0, to: 1 });
  playing = $state(false);
  /** Steps advanced per frame while playing. */
  speed = $state(1);
  steps = $state.raw<EpisodeSteps | null>(null);
  series = $state.raw<SeriesPayload | null>(null);
  analysis = $state.raw<AnalysisPayload | null>(null);
  target = $state<TargetChoice>({ kind: 'none' });
  td = $state<TdOptions>({ rule: 'dqn', n: 3, gamma: 0.99, truncation: 'bootstrap' });
  inMark = $state<number | null>(null);
  outMark = $state<number | null>(null);
  failedOnly = $state(false);
  message = $state<string | null>(null);
  busy = $state(false);

  private seriesRequest = 0;
  private analysisRequest = 0;

  constructor(private readonly client: Analysis) {}

  get current(): LoadedFile | null {
    return this.files[this.fileIndex] ?? null;
  }

  get n(): number {
    return this.steps?.n ?? 0;
  }

  /** Open step-file bytes; a damaged file opens with what could be recovered, a non-step file says why. */
  addFile(name: string, bytes: Uint8Array): number {
    const file = openStepFile(bytesSource(bytes), name);
    const key = `${this.files.length}:${name}`;
    this.files = [...this.files, { key, name, bytes, file }];
    void this.client.open(key, name, bytes);
    return this.files.length - 1;
  }

  addExternalTarget(net: TargetNet): void {
    this.externals = [...this.externals, net];
    this.target = { kind: 'external', index: this.externals.length - 1 };
    this.refresh();
  }

  selectFile(index: number, episode?: number, row?: number): void {
    const f = this.files[index];
    if (!f) return;
    this.fileIndex = index;
    this.td = { ...this.td, gamma: f.file.header.gamma };
    const hasTargets = f.file.snapshots.some((s) => s.role === 'target');
    this.target = hasTargets ? { kind: 'in-force' } : { kind: 'none' };
    this.analysis = null;
    const first = f.file.episodes[0]?.episode ?? 0;
    this.openEpisode(episode ?? first, row ?? 0);
    this.requestAnalysis();
  }

  openEpisode(episode: number, row = 0, view?: { from: number; to: number }): void {
    const f = this.current;
    if (!f) return;
    try {
      this.steps = f.file.readEpisode(episode);
    } catch (e) {
      this.message = (e as Error).message;
      return;
    }
    this.episode = episode;
    this.series = null;
    const n = this.steps.n;
    this.view = view && view.to > view.from && view.to <= n ? view : { from: 0, to: Math.max(n, 1) };
    this.row = Math.max(0, Math.min(row, n - 1));
    this.inMark = null;
    this.outMark = null;
    this.requestSeries();
  }

  setRow(row: number): void {
    const n = this.n;
    if (n === 0) return;
    this.row = Math.max(0, Math.min(Math.round(row), n - 1));
    // Keep the cursor inside the lanes' view, panning the view along with it.
    const { from, to } = this.view;
    if (this.row < from || this.row >= to) {
      const width = to - from;
      const start = Math.max(0, Math.min(n - width, this.row - Math.floor(width / 2)));
      this.view = { from: start, to: start + width };
    }
  }

  step(by: number): void {
    this.setRow(this.row + by);
  }

  /** The target spec for the worker, with layers read here for a snapshot of the file. */
  targetSpec(): TargetSpec {
    const t = this.target;
    const f = this.current;
    if (t.kind === 'none' || !f) return { kind: 'none' };
    if (t.kind === 'in-force') return { kind: 'in-force' };
    if (t.kind === 'external') {
      const net = this.externals[t.index];
      return net ? { kind: 'net', net } : { kind: 'none' };
    }
    const ref = f.file.snapshots[t.index];
    if (!ref) return { kind: 'none' };
    const snap = f.file.readSnapshot(ref);
    return { kind: 'net', net: { source: `${f.name}#${ref.id} (${ref.role}, training step ${ref.trainingStep})`, id: ref.id, layers: snap.layers } };
  }

  setTarget(choice: TargetChoice): void {
    this.target = choice;
    this.refresh();
  }

  setTd(td: Partial<TdOptions>): void {
    this.td = { ...this.td, ...td };
    this.refresh();
  }

  /** Recompute what depends on the target or the rule. */
  refresh(): void {
    this.requestSeries();
    this.requestAnalysis();
  }

  requestSeries(): void {
    const f = this.current;
    if (!f || this.episode < 0) return;
    const request = ++this.seriesRequest;
    const episode = this.episode;
    this.busy = true;
    this.client
      .series(f.key, episode, this.targetSpec(), $state.snapshot(this.td))
      .then((s) => {
        // An answer for an episode or a target the user has already left is dropped.
        if (request !== this.seriesRequest) return;
        this.series = s;
        this.busy = false;
      })
      .catch((e: Error) => {
        if (request === this.seriesRequest) {
          this.message = `analysis failed: ${e.message}`;
          this.busy = false;
        }
      });
  }

  requestAnalysis(): void {
    const f = this.current;
    if (!f) return;
    const request = ++this.analysisRequest;
    this.client
      .analyse(f.key, this.targetSpec(), $state.snapshot(this.td))
      .then((a) => {
        if (request === this.analysisRequest) this.analysis = a;
      })
      .catch((e: Error) => {
        if (request === this.analysisRequest) this.message = `analysis failed: ${e.message}`;
      });
  }

  /** Jump to the next (or previous) flip tick after the current row. */
  nextFlip(direction: 1 | -1): void {
    const flips = this.series?.flips;
    if (!flips) return;
    for (let r = this.row + direction; r >= 0 && r < flips.length; r += direction) {
      if (flips[r]) {
        this.setRow(r);
        return;
      }
    }
  }

  /** The next suspect after the current place: later in this episode, else the first of a later episode. */
  nextSuspect(): void {
    const list = this.analysis?.suspects;
    const steps = this.steps;
    if (!list || !steps || list.length === 0) return;
    const here = steps.step[this.row] ?? 0;
    const ordered = [...list].sort((a, b) => a.episode - b.episode || a.step - b.step);
    const next = ordered.find((s) => (s.episode === this.episode && s.step > here) || s.episode > this.episode) ?? ordered[0];
    this.goTo(next.episode, next.step);
  }

  /** Open an episode at a step index (not a row). */
  goTo(episode: number, step: number): void {
    if (episode !== this.episode) this.openEpisode(episode);
    const s = this.steps;
    if (!s) return;
    let row = 0;
    while (row < s.n - 1 && s.step[row] < step) row++;
    this.setRow(row);
  }

  toHash(): string {
    const f = this.current;
    return encodeHash({
      file: f?.name ?? null,
      episode: this.episode >= 0 ? this.episode : null,
      step: this.steps ? (this.steps.step[this.row] ?? null) : null,
      // Zoom and pan give fractional views; whole steps are what a reload needs.
      from: Math.floor(this.view.from),
      to: Math.ceil(this.view.to),
    });
  }

  /** Restore a view from a hash; returns false when the hash names nothing open. */
  fromHash(hash: string): boolean {
    const h = decodeHash(hash);
    const index = h.file === null ? 0 : this.files.findIndex((f) => f.name === h.file);
    if (index < 0 || !this.files[index]) return false;
    const f = this.files[index];
    const episode = h.episode !== null && f.file.episodes.some((e) => e.episode === h.episode) ? h.episode : undefined;
    this.selectFile(index, episode);
    if (h.step !== null && this.steps) this.goTo(this.episode, h.step);
    if (h.from !== null && h.to !== null && h.to > h.from && h.to <= this.n) this.view = { from: h.from, to: h.to };
    return true;
  }
}

/**
 * A recorder wrapped so that every accepted call is also written down in plain objects: the
 * expected contents of the file, built without the codec, to compare with what the reader returns.
 */
import type { EpisodeEnd, Outcome, StepColumns, WeightsRun } from '../../formats/types.ts';
import type { EpisodeEndInput, NoteInput, Recorder, SnapshotInput, StepInput } from '../../src/record/types.ts';
import { createRecorder, type RecorderHeader, type RecorderOptions } from '../../src/record/recorder.ts';
import { MemorySink } from '../../src/record/memory-sink.ts';

export interface ExpectedStep extends StepInput {
  onlineId: string;
  targetId: string;
}

export interface ExpectedEpisode {
  episode: number;
  steps: ExpectedStep[];
  end: EpisodeEnd | null;
}

export class MirroredRecording {
  readonly sink = new MemorySink();
  readonly recorder: Recorder;
  readonly episodes: ExpectedEpisode[] = [{ episode: 0, steps: [], end: null }];
  readonly notes: { episode: number; from: number; to: number; text: string }[] = [];
  readonly snapshots: (SnapshotInput & { id: string })[] = [];
  private onlineId = '';
  private targetId = '';

  constructor(
    readonly header: RecorderHeader,
    readonly options: RecorderOptions,
  ) {
    this.recorder = createRecorder(this.sink, header, options);
  }

  get current(): ExpectedEpisode {
    return this.episodes[this.episodes.length - 1];
  }

  step(input: StepInput): void {
    this.recorder.step(input);
    this.current.steps.push({ ...input, onlineId: this.onlineId, targetId: this.targetId });
  }

  snapshot(input: SnapshotInput): string {
    const id = this.recorder.snapshot(input);
    this.snapshots.push({ ...input, id });
    if (input.inForce ?? true) {
      if (input.role === 'online') this.onlineId = id;
      else this.targetId = id;
    }
    return id;
  }

  note(input: NoteInput): void {
    this.recorder.note(input);
    this.notes.push({ episode: input.episode ?? this.current.episode, from: input.from, to: input.to, text: input.text });
  }

  endEpisode(input: EpisodeEndInput = {}): void {
    const episode = this.recorder.endEpisode(input);
    const steps = this.current.steps;
    const last = steps[steps.length - 1];
    const flagged: Outcome = last?.terminal ? 'terminal' : last?.truncated ? 'truncated' : 'ended';
    this.current.end = {
      episode,
      length: steps.length,
      return: steps.reduce((sum, s) => sum + s.reward, 0),
      outcome: input.outcome ?? flagged,
      failed: input.failed ?? false,
      reason: input.reason ?? '',
      mode: input.mode ?? 'train',
      finalState: input.finalState ? Float32Array.from(input.finalState) : null,
      finalQ: input.finalQ ? Float32Array.from(input.finalQ) : null,
    };
    this.episodes.push({ episode: episode + 1, steps: [], end: null });
  }

  close(): Uint8Array {
    this.recorder.close();
    return this.sink.bytes();
  }

  /** Episodes that have a step or an end record (the last, still open one may have neither). */
  get recordedEpisodes(): ExpectedEpisode[] {
    return this.episodes.filter((e) => e.steps.length > 0 || e.end !== null);
  }
}

/** Expected columns of a run of steps, as the reader returns them (NaN where a value was absent). */
export function expectedColumns(steps: ExpectedStep[], D: number, A: number, extraNames: readonly string[]) {
  const anyEpsilon = steps.some((s) => s.epsilon !== undefined);
  return {
    state: Float32Array.from(steps.flatMap((s) => Array.from(s.state))),
    action: Uint32Array.from(steps, (s) => s.action),
    reward: Float32Array.from(steps, (s) => s.reward),
    flags: Uint8Array.from(steps, (s) => (s.terminal ? 1 : 0) | (s.truncated ? 2 : 0) | (s.explored ? 4 : 0)),
    q: Float32Array.from(steps.flatMap((s) => Array.from(s.q))),
    epsilon: anyEpsilon ? Float32Array.from(steps, (s) => s.epsilon ?? NaN) : null,
    extras: Object.fromEntries(extraNames.map((x) => [x, Float32Array.from(steps, (s) => s.extras?.[x] ?? NaN)])),
    weights: weightRuns(steps),
    shape: { D, A },
  };
}

/** [row, onlineId, targetId] wherever the ids in force change, starting at row 0. */
export function weightRuns(steps: ExpectedStep[]): WeightsRun[] {
  const runs: WeightsRun[] = [];
  steps.forEach((s, row) => {
    const last = runs[runs.length - 1];
    if (!last || last[1] !== s.onlineId || last[2] !== s.targetId) runs.push([row, s.onlineId, s.targetId]);
  });
  return runs;
}

/** The blocks a recorder with this block size writes: consecutive chunks of each episode. */
export function expectedBlocks(episodes: ExpectedEpisode[], blockSize: number, D: number, A: number, extraNames: readonly string[]) {
  const blocks: (Omit<StepColumns, 'extras' | 'epsilon'> & { epsilon: Float32Array | null; extras: Record<string, Float32Array> })[] = [];
  for (const e of episodes) {
    for (let first = 0; first < e.steps.length; first += blockSize) {
      const steps = e.steps.slice(first, first + blockSize);
      const { shape: _shape, ...columns } = expectedColumns(steps, D, A, extraNames);
      // Blocks carry only the extra columns the header declares (all of them, NaN where absent).
      blocks.push({ n: steps.length, episode: e.episode, firstStep: first, ...columns });
    }
  }
  return blocks;
}

/** The bit patterns of a float array, so that −0, infinities and subnormals are compared exactly. */
export function rawBitsOf(a: Float32Array): string[] {
  return Array.from(new Uint32Array(a.buffer, a.byteOffset, a.length), (x) => x.toString(16).padStart(8, '0'));
}

/**
 * Like rawBitsOf, with every NaN written "NaN": values that passed through JS numbers may have
 * had their NaN payload replaced (ECMAScript NumericToRawBytes allows any NaN encoding).
 */
export function bitsOf(a: Float32Array | null): string[] | null {
  if (!a) return null;
  return rawBitsOf(a).map((bits, i) => (Number.isNaN(a[i]) ? 'NaN' : bits));
}

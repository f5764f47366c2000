/**
 * The recorder: takes one step at a time from a training loop, keeps the open step block in typed
 * arrays, and hands whole records to a sink. A block is written every `blockSize` steps, at each
 * episode end and at close, so a killed process loses at most the open block. Every call checks its
 * input completely before changing anything, so a rejected call leaves the file as it was.
 */
import { actionArrayFor, type BlockToEncode } from '../../formats/records.ts';
import { snapshotId } from '../../formats/snapshot-id.ts';
import {
  ACTIVATIONS,
  FLAG_EXPLORED,
  FLAG_TERMINAL,
  FLAG_TRUNCATED,
  FORMAT_VERSION,
  type DenseLayer,
  type Header,
  type Outcome,
  type WeightsRun,
} from '../../formats/types.ts';
import { StepFileWriter, type ByteSink } from '../../formats/writer.ts';
import { RecordError } from './errors.ts';
import type { EpisodeEndInput, NoteInput, Recorder, RecorderStats, SnapshotInput, StepInput } from './types.ts';

export type RecorderHeader = Omit<Header, 'version' | 'extras' | 'run'> & {
  extras?: string[];
  run?: Record<string, unknown>;
};

export interface RecorderOptions {
  /** Steps per step block (default 4096). */
  blockSize?: number;
  /** Pack each block as predicted channels with Rice codes (SPEC.md §5.2, a version-2 file): 0.4–0.7× the raw size. */
  compress?: boolean;
}

interface SyncingSink extends ByteSink {
  sync?(): void;
}

export function createRecorder(sink: SyncingSink, header: RecorderHeader, options: RecorderOptions = {}): Recorder {
  return new StepRecorder(sink, header, options);
}

class StepRecorder implements Recorder {
  readonly stats: RecorderStats = { steps: 0, episodes: 0, blocks: 0, snapshots: 0, nonFiniteQ: 0, nonFiniteReward: 0, bytesWritten: 0 };
  private readonly writer: StepFileWriter;
  private readonly D: number;
  private readonly A: number;
  private readonly blockSize: number;
  private readonly block: BlockToEncode;
  private readonly extraNames: readonly string[];
  private episode = 0;
  /** Steps of the current episode already written in earlier blocks. */
  private episodeStepsWritten = 0;
  private episodeReturn = 0;
  /** Set by a terminal or truncated step: the episode must be ended before another step. */
  private endedBy: 'terminal' | 'truncated' | null = null;
  private onlineId = '';
  private targetId = '';
  private closed = false;
  private broken: Error | null = null;

  constructor(
    private readonly sink: SyncingSink,
    header: RecorderHeader,
    options: RecorderOptions,
  ) {
    const full: Header = {
      version: FORMAT_VERSION,
      stateDims: header.stateDims,
      actions: header.actions,
      gamma: header.gamma,
      system: header.system,
      extras: header.extras ?? [],
      run: plainRunInfo(header.run),
      createdAt: header.createdAt ?? new Date().toISOString(),
    };
    checkHeader(full);
    this.D = full.stateDims.length;
    this.A = full.actions.length;
    this.extraNames = full.extras;
    this.blockSize = options.blockSize ?? 4096;
    if (!Number.isInteger(this.blockSize) || this.blockSize < 1) {
      throw new RecordError('createRecorder', 'options.blockSize', `is ${options.blockSize}; expected a whole number of steps ≥ 1`);
    }
    const n = this.blockSize;
    this.block = {
      n: 0,
      episode: 0,
      firstStep: 0,
      state: new Float32Array(n * this.D),
      action: actionArrayFor(this.A, n),
      reward: new Float32Array(n),
      flags: new Uint8Array(n),
      q: new Float32Array(n * this.A),
      epsilon: null,
      extras: Object.fromEntries(full.extras.map((x) => [x, new Float32Array(n)])),
      weights: [],
    };
    this.writer = new StepFileWriter(sink, full, options.compress ?? false);
    this.stats.bytesWritten = this.writer.bytesWritten;
  }

  get currentEpisode(): number {
    return this.episode;
  }

  step(input: StepInput): void {
    this.usable('step');
    const { state, q, action, reward } = input;
    if (this.endedBy) {
      throw new RecordError('step', 'episode', `${this.episode} ended at step ${this.episodeStepsWritten + this.block.n - 1} (${this.endedBy}); call endEpisode() before the next step`);
    }
    if (!state || typeof state.length !== 'number' || state.length !== this.D) {
      throw new RecordError('step', 'state', `has ${state?.length ?? 'no'} values; expected ${this.D} (the header's state dimensions)`);
    }
    if (!q || typeof q.length !== 'number' || q.length !== this.A) {
      throw new RecordError('step', 'q', `has ${q?.length ?? 'no'} values; expected ${this.A} (one per action)`);
    }
    if (!Number.isInteger(action) || action < 0 || action >= this.A) {
      throw new RecordError('step', 'action', `is ${action}; expected a whole number in 0..${this.A - 1}`);
    }
    if (typeof reward !== 'number') throw new RecordError('step', 'reward', `is ${typeof reward}; expected a number`);
    if (input.epsilon !== undefined && typeof input.epsilon !== 'number') {
      throw new RecordError('step', 'epsilon', `is ${typeof input.epsilon}; expected a number`);
    }
    if (input.extras) {
      for (const k of Object.keys(input.extras)) {
        if (!this.extraNames.includes(k)) {
          throw new RecordError('step', `extras.${k}`, `is not a column of this file; the header declares ${this.extraNames.length ? this.extraNames.join(', ') : 'none'}`);
        }
        if (typeof input.extras[k] !== 'number') throw new RecordError('step', `extras.${k}`, `is ${typeof input.extras[k]}; expected a number`);
      }
    }

    const b = this.block;
    const row = b.n;
    if (row === 0) {
      b.episode = this.episode;
      b.firstStep = this.episodeStepsWritten;
      b.weights = [[0, this.onlineId, this.targetId]];
    }
    const D = this.D;
    const A = this.A;
    for (let i = 0; i < D; i++) b.state[row * D + i] = state[i];
    // Counted as stored: a value past float32's range (1e39, say) is kept as ±Infinity, and is
    // counted as one. NaN and ±Infinity both fail x − x = 0.
    for (let i = 0; i < A; i++) {
      const at = row * A + i;
      b.q[at] = q[i];
      if (b.q[at] - b.q[at] !== 0) this.stats.nonFiniteQ++;
    }
    b.action[row] = action;
    b.reward[row] = reward;
    if (b.reward[row] - b.reward[row] !== 0) this.stats.nonFiniteReward++;
    b.flags[row] = (input.terminal ? FLAG_TERMINAL : 0) | (input.truncated ? FLAG_TRUNCATED : 0) | (input.explored ? FLAG_EXPLORED : 0);
    if (input.epsilon !== undefined) {
      if (!b.epsilon) b.epsilon = new Float32Array(this.blockSize).fill(NaN);
      b.epsilon[row] = input.epsilon;
    } else if (b.epsilon) {
      b.epsilon[row] = NaN;
    }
    for (const name of this.extraNames) b.extras[name][row] = input.extras?.[name] ?? NaN;
    b.n = row + 1;
    this.episodeReturn += reward;
    this.stats.steps++;
    if (input.terminal) this.endedBy = 'terminal';
    else if (input.truncated) this.endedBy = 'truncated';
    if (b.n === this.blockSize) this.flush();
  }

  endEpisode(input: EpisodeEndInput = {}): number {
    this.usable('endEpisode');
    const finalState = input.finalState === undefined ? null : Float32Array.from(input.finalState);
    if (finalState && finalState.length !== this.D) {
      throw new RecordError('endEpisode', 'finalState', `has ${finalState.length} values; expected ${this.D} (the header's state dimensions)`);
    }
    const finalQ = input.finalQ === undefined ? null : Float32Array.from(input.finalQ);
    if (finalQ && finalQ.length !== this.A) {
      throw new RecordError('endEpisode', 'finalQ', `has ${finalQ.length} values; expected ${this.A} (one per action)`);
    }
    const outcome: Outcome = input.outcome ?? this.endedBy ?? 'ended';
    if (!['terminal', 'truncated', 'ended'].includes(outcome)) {
      throw new RecordError('endEpisode', 'outcome', `is "${outcome}"; expected terminal, truncated or ended`);
    }
    const length = this.episodeStepsWritten + this.block.n;
    this.flush();
    const episode = this.episode;
    this.guard(() =>
      this.writer.writeEpisodeEnd({
        episode,
        length,
        return: this.episodeReturn,
        outcome,
        failed: input.failed ?? false,
        reason: input.reason ?? '',
        mode: input.mode ?? 'train',
        finalState,
        finalQ,
      }),
    );
    this.sink.sync?.();
    this.episode++;
    this.episodeStepsWritten = 0;
    this.episodeReturn = 0;
    this.endedBy = null;
    this.stats.episodes++;
    this.stats.bytesWritten = this.writer.bytesWritten;
    return episode;
  }

  snapshot(input: SnapshotInput): string {
    this.usable('snapshot');
    if (input.role !== 'online' && input.role !== 'target') {
      throw new RecordError('snapshot', 'role', `is ${JSON.stringify(input.role)}; expected "online" or "target"`);
    }
    if (!Number.isSafeInteger(input.trainingStep) || input.trainingStep < 0) {
      throw new RecordError('snapshot', 'trainingStep', `is ${input.trainingStep}; expected a whole number ≥ 0`);
    }
    checkLayers(input.layers, this.D, this.A);
    const layers = input.layers.map((l) => ({ ...l, weights: Float32Array.from(l.weights), bias: Float32Array.from(l.bias) }));
    if (input.store !== undefined && typeof input.store !== 'boolean') throw new RecordError('snapshot', 'store', `is ${typeof input.store}; expected true or false`);
    const id = snapshotId(layers);
    if (input.store ?? true) {
      this.guard(() => this.writer.writeSnapshot({ role: input.role, trainingStep: input.trainingStep, id, layers }));
      this.stats.snapshots++;
    }
    if (input.inForce ?? true) {
      if (input.role === 'online') this.onlineId = id;
      else this.targetId = id;
      this.markWeights();
    }
    this.stats.bytesWritten = this.writer.bytesWritten;
    return id;
  }

  note(input: NoteInput): void {
    this.usable('note');
    const episode = input.episode ?? this.episode;
    if (!Number.isInteger(episode) || episode < 0) throw new RecordError('note', 'episode', `is ${episode}; expected an episode index ≥ 0`);
    if (!Number.isInteger(input.from) || input.from < 0) throw new RecordError('note', 'from', `is ${input.from}; expected a step index ≥ 0`);
    if (!Number.isInteger(input.to) || input.to < input.from) throw new RecordError('note', 'to', `is ${input.to}; expected a step index ≥ from (${input.from})`);
    if (typeof input.text !== 'string') throw new RecordError('note', 'text', `is ${typeof input.text}; expected a string`);
    this.guard(() => this.writer.writeNote({ episode, from: input.from, to: input.to, text: input.text }));
    this.stats.bytesWritten = this.writer.bytesWritten;
  }

  close(): void {
    this.usable('close');
    // Steps of an episode that was never ended are kept; the file simply has no end record for it.
    this.flush();
    this.guard(() => this.writer.finish());
    this.closed = true;
    this.stats.bytesWritten = this.writer.bytesWritten;
  }

  private markWeights(): void {
    const b = this.block;
    if (b.n === 0) return; // the next block starts with the ids in force
    const last = b.weights[b.weights.length - 1];
    if (last[0] === b.n) b.weights[b.weights.length - 1] = [b.n, this.onlineId, this.targetId];
    else if (last[1] !== this.onlineId || last[2] !== this.targetId) b.weights.push([b.n, this.onlineId, this.targetId] as WeightsRun);
  }

  private flush(): void {
    const b = this.block;
    if (b.n === 0) return;
    // Weights that came into force after the block's last step belong to the next block, which starts with them.
    b.weights = b.weights.filter((run) => run[0] < b.n);
    this.guard(() => this.writer.writeBlock(b));
    this.episodeStepsWritten += b.n;
    b.n = 0;
    b.epsilon = null;
    this.stats.blocks++;
    this.stats.bytesWritten = this.writer.bytesWritten;
  }

  private usable(call: string): void {
    if (this.broken) throw new RecordError(call, 'recorder', `cannot be used after its sink failed: ${this.broken.message}`);
    if (this.closed) throw new RecordError(call, 'recorder', 'is closed; no call is allowed after close()');
  }

  /** A sink that fails (disk full) leaves a file with whole records only; stop taking more. */
  private guard<T>(write: () => T): T {
    try {
      return write();
    } catch (e) {
      this.broken = e as Error;
      throw e;
    }
  }
}

/**
 * Run info as plain data: a JSON round trip turns dates into ISO strings and drops undefined, so
 * the header holds only standard MessagePack types that any reader decodes.
 */
function plainRunInfo(run: Record<string, unknown> | undefined): Record<string, unknown> {
  if (run === undefined) return {};
  if (typeof run !== 'object' || run === null || Array.isArray(run)) throw new RecordError('createRecorder', 'header.run', 'expected a map of facts about the run');
  try {
    return JSON.parse(JSON.stringify(run)) as Record<string, unknown>;
  } catch (e) {
    throw new RecordError('createRecorder', 'header.run', `cannot be stored: ${(e as Error).message}`);
  }
}

function checkHeader(h: Header): void {
  const fail = (field: string, detail: string) => {
    throw new RecordError('createRecorder', `header.${field}`, detail);
  };
  if (!Array.isArray(h.stateDims) || h.stateDims.length === 0) fail('stateDims', 'is empty; expected at least one {name, unit}');
  h.stateDims.forEach((d, i) => {
    if (typeof d?.name !== 'string' || typeof d?.unit !== 'string') fail(`stateDims[${i}]`, 'expected {name, unit} strings');
  });
  if (!Array.isArray(h.actions) || h.actions.length === 0) fail('actions', 'is empty; expected at least one action name');
  if (!h.actions.every((a) => typeof a === 'string')) fail('actions', 'expected a list of action names');
  if (typeof h.gamma !== 'number' || !(h.gamma >= 0 && h.gamma <= 1)) fail('gamma', `is ${h.gamma}; expected a discount in [0, 1]`);
  if (!h.system || typeof h.system.kind !== 'string') fail('system.kind', 'is missing; expected the control-system kind');
  for (const [role, index] of Object.entries(h.system.map ?? {})) {
    if (!Number.isInteger(index) || index < 0 || index >= h.stateDims.length) {
      fail(`system.map.${role}`, `is ${index}; expected a state index in 0..${h.stateDims.length - 1}`);
    }
  }
  if (new Set(h.extras).size !== h.extras.length) fail('extras', 'names a column twice');
}

function checkLayers(layers: DenseLayer[], D: number, A: number): void {
  const fail = (field: string, detail: string) => {
    throw new RecordError('snapshot', field, detail);
  };
  if (!Array.isArray(layers) || layers.length === 0) fail('layers', 'is empty; expected at least one dense layer');
  layers.forEach((l, i) => {
    const at = `layers[${i}]`;
    const wantIn = i === 0 ? D : layers[i - 1].outputs;
    if (l.inputs !== wantIn) fail(`${at}.inputs`, `is ${l.inputs}; expected ${wantIn} (${i === 0 ? "the header's state dimensions" : 'the previous layer\'s outputs'})`);
    if (!Number.isInteger(l.outputs) || l.outputs < 1) fail(`${at}.outputs`, `is ${l.outputs}; expected a whole number ≥ 1`);
    if (l.weights?.length !== l.inputs * l.outputs) fail(`${at}.weights`, `has ${l.weights?.length} values; expected ${l.inputs}×${l.outputs} = ${l.inputs * l.outputs}`);
    if (l.bias?.length !== l.outputs) fail(`${at}.bias`, `has ${l.bias?.length} values; expected ${l.outputs}`);
    if (!ACTIVATIONS.includes(l.activation)) fail(`${at}.activation`, `is "${l.activation}"; expected one of ${ACTIVATIONS.join(', ')}`);
  });
  const last = layers[layers.length - 1];
  if (last.outputs !== A) fail(`layers[${layers.length - 1}].outputs`, `is ${last.outputs}; expected ${A} (one Q-value per action)`);
}

/**
 * Tiny control systems with known action values, a recorder that keeps what it is given, and a
 * plain-JS forward pass over DenseLayers — the pieces the agent tests are built from.
 */
import type { ControlSystem, PhysicalState, StepOutcome } from '../../src/envs/types.ts';
import type { DenseLayer } from '../../formats/types.ts';
import type { EpisodeEndInput, NoteInput, Recorder, RecorderStats, SnapshotInput, StepInput } from '../../src/record/types.ts';

/**
 * One state, constant observation; action a pays `rewards[a]`. With `terminalAfterOneStep` every
 * episode is a single terminal step (a bandit: Q(s, a) = rewards[a]); otherwise episodes are cut by
 * the time limit only, so every target bootstraps and Q(s, a) = rewards[a] + γ max_b Q(s, b).
 */
export class OneStateSystem implements ControlSystem {
  readonly description = { kind: 'one-state', title: 'one-state test system', map: {}, params: {} };
  readonly stateDims = [{ name: 'bias', unit: '' }];
  readonly actions: string[];
  private count = 0;

  constructor(
    private readonly rewards: number[],
    readonly timeLimit: number,
    private readonly terminalAfterOneStep = false,
  ) {
    this.actions = rewards.map((_, a) => `action ${a}`);
  }

  reset(): Float32Array {
    this.count = 0;
    return new Float32Array([1]);
  }

  step(action: number): StepOutcome {
    this.count++;
    const terminal = this.terminalAfterOneStep;
    const truncated = !terminal && this.count >= this.timeLimit;
    return {
      observation: new Float32Array([1]),
      reward: this.rewards[action],
      terminal,
      truncated,
      reason: terminal ? 'one step' : truncated ? 'time limit' : undefined,
      failed: false,
    };
  }

  getState(): PhysicalState {
    return { vars: [], stepCount: this.count, rng: 0 };
  }

  setState(state: PhysicalState): void {
    this.count = state.stepCount;
  }
}

/**
 * A small seeded system with a real state: a point on a line pushed left or right, ending (terminal)
 * when it leaves [−1, 1], truncated at the time limit. Not a physics model, just something with
 * varied states and both kinds of ending for the trainer to run through.
 */
export class DriftSystem implements ControlSystem {
  readonly description = { kind: 'drift', title: 'drift test system', map: { position: 0 }, params: {} };
  readonly stateDims = [{ name: 'position', unit: 'm' }, { name: 'velocity', unit: 'm/s' }];
  readonly actions = ['left', 'right'];
  private x = 0;
  private v = 0;
  private count = 0;
  private rng: number;

  constructor(seed: number, readonly timeLimit = 50) {
    this.rng = seed >>> 0;
  }

  private uniform(): number {
    // xorshift32 (Marsaglia 2003, J. Stat. Softw. 8(14), shifts 13, 17, 5).
    let x = this.rng || 1;
    x ^= x << 13; x >>>= 0;
    x ^= x >>> 17;
    x ^= x << 5; x >>>= 0;
    this.rng = x;
    return x / 4294967296;
  }

  reset(): Float32Array {
    this.x = (this.uniform() - 0.5) * 0.5;
    this.v = 0;
    this.count = 0;
    return new Float32Array([this.x, this.v]);
  }

  step(action: number): StepOutcome {
    this.count++;
    this.v += (action === 1 ? 0.02 : -0.02) + (this.uniform() - 0.5) * 0.01;
    this.x += this.v;
    const terminal = Math.abs(this.x) > 1;
    const truncated = !terminal && this.count >= this.timeLimit;
    return {
      observation: new Float32Array([this.x, this.v]),
      reward: terminal ? 0 : 1,
      terminal,
      truncated,
      reason: terminal ? 'left the line' : truncated ? 'time limit' : undefined,
      failed: terminal,
    };
  }

  getState(): PhysicalState {
    return { vars: [this.x, this.v], stepCount: this.count, rng: this.rng };
  }

  setState(state: PhysicalState): void {
    [this.x, this.v] = state.vars;
    this.count = state.stepCount;
    this.rng = state.rng;
  }
}

/** Keeps copies of everything it is handed, so tests can inspect a run after the fact. */
export class MemoryRecorder implements Recorder {
  readonly steps: { state: number[]; action: number; reward: number; q: number[]; terminal: boolean; truncated: boolean; explored: boolean; epsilon: number; episode: number }[] = [];
  readonly ends: (EpisodeEndInput & { episode: number; length: number })[] = [];
  readonly snapshots: (SnapshotInput & { afterSteps: number })[] = [];
  private episodeLength = 0;
  currentEpisode = 0;

  step(input: StepInput): void {
    this.steps.push({
      state: Array.from(input.state), action: input.action, reward: input.reward, q: Array.from(input.q),
      terminal: !!input.terminal, truncated: !!input.truncated, explored: !!input.explored,
      epsilon: input.epsilon ?? NaN, episode: this.currentEpisode,
    });
    this.episodeLength++;
  }

  endEpisode(input: EpisodeEndInput = {}): number {
    this.ends.push({
      ...input,
      finalState: input.finalState && Array.from(input.finalState),
      finalQ: input.finalQ && Array.from(input.finalQ),
      episode: this.currentEpisode,
      length: this.episodeLength,
    });
    this.episodeLength = 0;
    return this.currentEpisode++;
  }

  snapshot(input: SnapshotInput): string {
    this.snapshots.push({ ...input, afterSteps: this.steps.length });
    return String(this.snapshots.length);
  }

  note(_input: NoteInput): void {}
  close(): void {}

  get stats(): RecorderStats {
    return { steps: this.steps.length, episodes: this.ends.length, blocks: 0, snapshots: this.snapshots.length, nonFiniteQ: 0, nonFiniteReward: 0, bytesWritten: 0 };
  }
}

/** y = activation(x · W + b) layer by layer, W row-major [inputs][outputs], in double precision. */
export function forwardDense(layers: DenseLayer[], input: ArrayLike<number>): number[] {
  let x = Array.from(input);
  for (const layer of layers) {
    const y: number[] = [];
    for (let o = 0; o < layer.outputs; o++) {
      let sum = layer.bias[o];
      for (let i = 0; i < layer.inputs; i++) sum += x[i] * layer.weights[i * layer.outputs + o];
      y.push(activate(layer.activation, sum));
    }
    x = y;
  }
  return x;
}

function activate(name: DenseLayer['activation'], v: number): number {
  switch (name) {
    case 'linear': return v;
    case 'relu': return Math.max(0, v);
    case 'tanh': return Math.tanh(v);
    case 'sigmoid': return 1 / (1 + Math.exp(-v));
    case 'elu': return v > 0 ? v : Math.expm1(v);
    case 'softplus': return Math.log1p(Math.exp(v));
    default: throw new Error(`forwardDense: activation '${name as string}' is not handled here`);
  }
}

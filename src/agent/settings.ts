/**
 * Every knob of the deep Q-learning trainer in one typed record. Settings are data: a run's settings
 * can be written into a step file's header (`run`) as they are, and read back to repeat the run.
 *
 * The defaults suit small control systems (a few state dimensions, two or three actions, episodes of
 * a few hundred steps). They are scaled-down choices, not published ones; where a published value
 * exists for comparison it is named beside the field.
 */

/** Hidden-layer activations the recorder's `DenseLayer` can name and TensorFlow.js can build. */
export type HiddenActivation = 'relu' | 'tanh' | 'sigmoid' | 'elu' | 'softplus';
export const HIDDEN_ACTIVATIONS: readonly HiddenActivation[] = ['relu', 'tanh', 'sigmoid', 'elu', 'softplus'];

/** Which TD target the minibatch regresses onto (see targets.ts for the equations). */
export type TargetRule = 'dqn' | 'double';
export const TARGET_RULES: readonly TargetRule[] = ['dqn', 'double'];

export interface DqnSettings {
  /** Seeds the weight initialisers, ε-greedy draws and minibatch sampling (an unsigned 32-bit integer). The control system is seeded by whoever builds it. */
  seed: number;
  /** Units in each hidden dense layer, input side first (count of units per layer; [] = a linear Q-function). */
  hiddenLayers: number[];
  /** Activation after every hidden layer; the output layer is always linear. */
  activation: HiddenActivation;
  /** Adam step size (dimensionless, per update). */
  learningRate: number;
  /** Discount γ per step, in [0, 1). */
  gamma: number;
  /** Transitions per minibatch (count). Mnih et al. (2015) used 32. */
  batchSize: number;
  /** Transitions the replay buffer holds before overwriting the oldest (count). Mnih et al. (2015) used 1,000,000. */
  replayCapacity: number;
  /** Environment steps taken before the first update (count); must be at least `batchSize`. Mnih et al. (2015) used 50,000. */
  replayStart: number;
  /** Environment steps between updates (count; 1 = one update per step). Mnih et al. (2015) used 4 (from memory). */
  trainEvery: number;
  /** Updates between copies of the online weights into the target network, C (count of updates). Mnih et al. (2015) used 10,000. */
  targetSync: number;
  /** TD target: 'dqn' (max over the target network) or 'double' (online argmax, target evaluation). */
  rule: TargetRule;
  /** Huber loss threshold δ (in units of return): quadratic for |TD error| ≤ δ, linear beyond. 1 matches the error clip of Mnih et al. (2015). */
  huberDelta: number;
  /** ε at the first training step (probability, in [0, 1]). */
  epsilonStart: number;
  /** ε after the decay and from then on (probability, in [0, 1]). Mnih et al. (2015) used 0.1. */
  epsilonEnd: number;
  /** Training steps over which ε falls linearly from `epsilonStart` to `epsilonEnd` (count of environment steps; 0 = `epsilonEnd` from the start). */
  epsilonDecaySteps: number;
  /** Training environment steps in the whole run (count); evaluation steps are not counted. */
  totalSteps: number;
  /** Training steps between evaluation rounds (count; 0 = no evaluation). A round starts at the first episode end on or after each multiple. */
  evalEvery: number;
  /** Episodes per evaluation round (count). */
  evalEpisodes: number;
  /** ε used while evaluating (probability; 0 = greedy). Mnih et al. (2015) used 0.05. */
  evalEpsilon: number;
  /** If set, rescale each update's gradients so their global L2 norm is at most this (dimensionless); null = no clipping. */
  gradientClipNorm: number | null;
  /** Write online and target snapshots at every n-th target sync (count of syncs; 1 = every sync). Snapshots at the start are always written. */
  snapshotEverySyncs: number;
  /** States from the start of training kept aside to average max_a Q over, the health measure of Mnih et al. (2015) (count). */
  heldOutStates: number;
}

/** Defaults for small control systems (common practice; far smaller than the values of Mnih et al. 2015, which were set for much longer runs). */
export const defaultSettings: Readonly<DqnSettings> = Object.freeze({
  seed: 1,
  hiddenLayers: Object.freeze([64, 64]) as number[],
  activation: 'relu',
  learningRate: 1e-3,
  gamma: 0.99,
  batchSize: 64,
  replayCapacity: 50_000,
  replayStart: 1_000,
  trainEvery: 1,
  targetSync: 500,
  rule: 'double',
  huberDelta: 1,
  epsilonStart: 1,
  epsilonEnd: 0.05,
  epsilonDecaySteps: 10_000,
  totalSteps: 20_000,
  evalEvery: 5_000,
  evalEpisodes: 5,
  evalEpsilon: 0,
  gradientClipNorm: 10,
  snapshotEverySyncs: 1,
  heldOutStates: 500,
} satisfies DqnSettings);

export class SettingsError extends Error {
  override name = 'SettingsError';
}

/**
 * Fill in defaults and check every field. Throws SettingsError naming the field, the value given and
 * what was expected, so a typo in a command line or a config file is caught before a long run starts.
 */
export function resolveSettings(partial: Partial<DqnSettings> = {}): DqnSettings {
  for (const key of Object.keys(partial)) {
    if (!(key in defaultSettings)) {
      throw new SettingsError(`unknown setting "${key}"; expected one of: ${Object.keys(defaultSettings).join(', ')}`);
    }
  }
  const merged: DqnSettings = { ...defaultSettings, hiddenLayers: [...defaultSettings.hiddenLayers] };
  for (const [key, value] of Object.entries(partial)) {
    if (value !== undefined) (merged as unknown as Record<string, unknown>)[key] = value;
  }
  const s = merged;
  // A private copy, so a caller editing its array later cannot change a run in progress.
  if (Array.isArray(s.hiddenLayers)) s.hiddenLayers = [...s.hiddenLayers];

  integer('seed', s.seed, 0, 0xffffffff);
  if (!Array.isArray(s.hiddenLayers)) fail('hiddenLayers', s.hiddenLayers, 'an array of positive integers');
  s.hiddenLayers.forEach((units, i) => integer(`hiddenLayers[${i}]`, units, 1, 1 << 16));
  oneOf('activation', s.activation, HIDDEN_ACTIVATIONS);
  real('learningRate', s.learningRate, { above: 0 });
  real('gamma', s.gamma, { atLeast: 0, below: 1 });
  integer('batchSize', s.batchSize, 1);
  integer('replayCapacity', s.replayCapacity, 1);
  if (s.replayCapacity < s.batchSize) fail('replayCapacity', s.replayCapacity, `at least batchSize (${s.batchSize})`);
  integer('replayStart', s.replayStart, 0);
  if (s.replayStart < s.batchSize) fail('replayStart', s.replayStart, `at least batchSize (${s.batchSize}), so the first minibatch has data`);
  integer('trainEvery', s.trainEvery, 1);
  integer('targetSync', s.targetSync, 1);
  oneOf('rule', s.rule, TARGET_RULES);
  real('huberDelta', s.huberDelta, { above: 0 });
  real('epsilonStart', s.epsilonStart, { atLeast: 0, atMost: 1 });
  real('epsilonEnd', s.epsilonEnd, { atLeast: 0, atMost: 1 });
  integer('epsilonDecaySteps', s.epsilonDecaySteps, 0);
  integer('totalSteps', s.totalSteps, 1);
  integer('evalEvery', s.evalEvery, 0);
  integer('evalEpisodes', s.evalEpisodes, 0);
  real('evalEpsilon', s.evalEpsilon, { atLeast: 0, atMost: 1 });
  if (s.gradientClipNorm !== null) real('gradientClipNorm', s.gradientClipNorm, { above: 0 });
  integer('snapshotEverySyncs', s.snapshotEverySyncs, 1);
  integer('heldOutStates', s.heldOutStates, 0);
  return s;
}

function fail(field: string, value: unknown, expected: string): never {
  const shown = typeof value === 'number' ? String(value) : (JSON.stringify(value) ?? String(value));
  throw new SettingsError(`setting ${field} = ${shown}: expected ${expected}`);
}

function integer(field: string, value: unknown, min: number, max = Number.MAX_SAFE_INTEGER): void {
  if (typeof value !== 'number' || !Number.isInteger(value) || value < min || value > max) {
    fail(field, value, max === Number.MAX_SAFE_INTEGER ? `an integer ≥ ${min}` : `an integer in [${min}, ${max}]`);
  }
}

interface Bounds { above?: number; atLeast?: number; below?: number; atMost?: number }

function real(field: string, value: unknown, bounds: Bounds): void {
  const parts: string[] = [];
  if (bounds.above !== undefined) parts.push(`> ${bounds.above}`);
  if (bounds.atLeast !== undefined) parts.push(`≥ ${bounds.atLeast}`);
  if (bounds.below !== undefined) parts.push(`< ${bounds.below}`);
  if (bounds.atMost !== undefined) parts.push(`≤ ${bounds.atMost}`);
  const expected = `a finite number ${parts.join(' and ')}`;
  if (typeof value !== 'number' || !Number.isFinite(value)) fail(field, value, expected);
  if (bounds.above !== undefined && !(value > bounds.above)) fail(field, value, expected);
  if (bounds.atLeast !== undefined && !(value >= bounds.atLeast)) fail(field, value, expected);
  if (bounds.below !== undefined && !(value < bounds.below)) fail(field, value, expected);
  if (bounds.atMost !== undefined && !(value <= bounds.atMost)) fail(field, value, expected);
}

function oneOf<T extends string>(field: string, value: unknown, allowed: readonly T[]): void {
  if (!allowed.includes(value as T)) fail(field, value, `one of ${allowed.map((a) => `'${a}'`).join(', ')}`);
}

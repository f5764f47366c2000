/**
 * What every control system in `src/envs` offers. A control system is deterministic given its seed,
 * and its whole physical state (including the random generator and the step counter) can be read
 * and restored, so a later what-if can replay from any recorded step.
 */

/** One named state dimension, as it appears in a step file header. */
export interface StateDim {
  name: string;
  unit: string;
}

/**
 * How a viewer can draw the system: its kind and which state index means what.
 * `map` names roles (for example `position`, `angle`) and gives the state index holding each.
 */
export interface SystemDescription {
  kind: string;
  /** Our scenario name, for people: "balancing trolley", "crater rover". */
  title: string;
  map: Record<string, number>;
  /** Physical constants a drawing or a what-if needs (limits, lengths, masses). */
  params: Record<string, number>;
}

export interface StepOutcome {
  observation: Float32Array;
  reward: number;
  /** The task ended by itself (pole fell, rim reached): no bootstrap past this step. */
  terminal: boolean;
  /** Cut off by the time limit: not terminal, the value target must still bootstrap (Pardo et al. 2018). */
  truncated: boolean;
  /** Why the episode ended, in plain words, when it did. */
  reason?: string;
  /** Whether an ending counts as a failure of the task (the pole fell) or not (the rim was reached). */
  failed?: boolean;
}

/** The whole physical state, enough to continue exactly where it was read. */
export interface PhysicalState {
  /** Physical variables in the order of `stateDims` (double precision, as simulated). */
  vars: number[];
  /** Steps taken in the current episode (drives the time limit). */
  stepCount: number;
  /** Internal state of the seeded random generator. */
  rng: number;
}

export interface ControlSystem {
  readonly description: SystemDescription;
  readonly stateDims: readonly StateDim[];
  readonly actions: readonly string[];
  /** Steps after which an episode is truncated. */
  readonly timeLimit: number;
  /** Start a new episode; draws the start state from the seeded generator. */
  reset(): Float32Array;
  step(action: number): StepOutcome;
  getState(): PhysicalState;
  setState(state: PhysicalState): void;
}

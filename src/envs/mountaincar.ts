/**
 * Crater rover: an under-powered rover must rock itself out of a crater to reach the rim.
 *
 * Physics model: mountain car as given by Sutton & Barto (2018), §10.1, Example 10.1 (task from
 * Moore 1990). The crater floor has height sin(3x); the published model has no units, and for our
 * scenario we read x in metres and v in metres per step, since x' = x + v'.
 */

import { checkAction, checkPhysicalState, checkTimeLimit } from './checks.ts';
import { SeededRandom } from './random.ts';
import type { ControlSystem, PhysicalState, StateDim, StepOutcome, SystemDescription } from './types.ts';

/** (x, v) */
export type MountainCarVars = readonly [number, number];

export interface MountainCarParams {
  minPosition: number;
  maxPosition: number;
  /** Reaching x ≥ this ends the episode: the rover is over the rim. */
  goalPosition: number;
  /** |v| is clipped to this. */
  maxSpeed: number;
  /** Velocity change per step per unit of throttle A. */
  thrust: number;
  /** Velocity change per step from the slope: gravity · cos(hillFrequency · x). */
  gravity: number;
  /** The crater floor is sin(hillFrequency · x). */
  hillFrequency: number;
}

/** Sutton & Barto (2018), Example 10.1. */
export const MOUNTAIN_CAR_PARAMS: Readonly<MountainCarParams> = Object.freeze({
  minPosition: -1.2,
  maxPosition: 0.5,
  goalPosition: 0.5,
  maxSpeed: 0.07,
  thrust: 0.001,
  gravity: 0.0025,
  hillFrequency: 3,
});

/**
 * Our reward shape: every step drains the battery a little, more when the motor runs, and reaching
 * the rim adds a bonus on top of that step's drain (the motor was still used on the last step).
 */
export const MOUNTAIN_CAR_REWARD = Object.freeze({ idleDrain: -0.01, motorDrain: -0.005, rimBonus: 1 });

export const MOUNTAIN_CAR_TIME_LIMIT = 600;

/** Throttle A for each action index. */
const THROTTLE = [-1, 0, 1] as const;

/**
 * One step of Sutton & Barto (2018), Example 10.1:
 *   v' = bound(v + thrust·A − gravity·cos(3x)),  x' = bound(x + v'),
 * and v' = 0 when x' hits the left bound, so the rover stops against the crater wall instead of
 * gathering speed through it.
 */
export function mountainCarStep(vars: readonly number[], throttle: number, params: MountainCarParams): MountainCarVars {
  const [x, v] = vars;
  const { minPosition, maxPosition, maxSpeed, thrust, gravity, hillFrequency } = params;
  let nextV = clamp(v + thrust * throttle - gravity * Math.cos(hillFrequency * x), -maxSpeed, maxSpeed);
  const nextX = clamp(x + nextV, minPosition, maxPosition);
  if (nextX <= minPosition) nextV = 0;
  return [nextX, nextV];
}

export interface MountainCarOptions {
  seed: number;
  /** Steps before truncation; default 600. */
  timeLimit?: number;
}

const KIND = 'mountain-car';
const STATE_DIMS: readonly StateDim[] = Object.freeze([
  { name: 'x', unit: 'm' },
  { name: 'v', unit: 'm/step' },
]);
const ACTIONS: readonly string[] = Object.freeze(['reverse', 'coast', 'forward']);

export class MountainCar implements ControlSystem {
  readonly description: SystemDescription;
  readonly stateDims = STATE_DIMS;
  readonly actions = ACTIONS;
  readonly timeLimit: number;
  readonly params: Readonly<MountainCarParams> = MOUNTAIN_CAR_PARAMS;

  #rng: SeededRandom;
  #vars: MountainCarVars = [0, 0];
  #stepCount = 0;
  /** Why stepping is refused: before the first reset, or after the episode ended. */
  #blocked: string | undefined = 'step() called before reset()';

  constructor(options: MountainCarOptions) {
    const timeLimit = options.timeLimit ?? MOUNTAIN_CAR_TIME_LIMIT;
    checkTimeLimit(KIND, timeLimit);
    this.timeLimit = timeLimit;
    this.#rng = new SeededRandom(options.seed);
    this.description = {
      kind: KIND,
      title: 'crater rover',
      map: { position: 0, velocity: 1 },
      params: { ...this.params },
    };
  }

  /** Start at rest somewhere near the crater floor: x ~ U[−0.6, −0.4), v = 0 (Sutton & Barto 2018, Example 10.1). */
  reset(): Float32Array {
    this.#vars = [this.#rng.uniform(-0.6, -0.4), 0];
    this.#stepCount = 0;
    this.#blocked = undefined;
    return Float32Array.from(this.#vars);
  }

  step(action: number): StepOutcome {
    if (this.#blocked !== undefined) throw new Error(`${KIND}: ${this.#blocked}`);
    checkAction(KIND, action, ACTIONS);

    const throttle = THROTTLE[action];
    const next = mountainCarStep(this.#vars, throttle, this.params);
    this.#vars = next;
    this.#stepCount += 1;
    const observation = Float32Array.from(next);
    const drain = MOUNTAIN_CAR_REWARD.idleDrain + MOUNTAIN_CAR_REWARD.motorDrain * Math.abs(throttle);

    if (next[0] >= this.params.goalPosition) {
      this.#blocked = 'the episode has ended (reached the rim); call reset()';
      const reward = drain + MOUNTAIN_CAR_REWARD.rimBonus;
      return { observation, reward, terminal: true, truncated: false, reason: 'reached the rim', failed: false };
    }
    if (this.#stepCount >= this.timeLimit) {
      this.#blocked = 'the episode has ended (time limit); call reset()';
      return { observation, reward: drain, terminal: false, truncated: true, reason: 'time limit', failed: true };
    }
    return { observation, reward: drain, terminal: false, truncated: false };
  }

  getState(): PhysicalState {
    return { vars: [...this.#vars], stepCount: this.#stepCount, rng: this.#rng.state };
  }

  /** Restoring a state resumes the episode from it, even one read after its end, so a what-if can branch anywhere. */
  setState(state: PhysicalState): void {
    checkPhysicalState(KIND, state, STATE_DIMS.map((dim) => dim.name));
    const [x, v] = state.vars;
    this.#vars = [x, v];
    this.#stepCount = state.stepCount;
    this.#rng.state = state.rng;
    this.#blocked = undefined;
  }
}

function clamp(value: number, lo: number, hi: number): number {
  return Math.min(Math.max(value, lo), hi);
}

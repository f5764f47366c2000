import { describe, expect, it } from 'vitest';
import {
  MOUNTAIN_CAR_PARAMS,
  MOUNTAIN_CAR_REWARD,
  MountainCar,
  mountainCarStep,
} from '../../src/envs/mountaincar.ts';
import type { StepOutcome } from '../../src/envs/types.ts';

/** A rover placed at (x, v) mid-episode, as a what-if would place it. */
function roverAt(x: number, v: number, stepCount = 0): MountainCar {
  const rover = new MountainCar({ seed: 1 });
  rover.setState({ vars: [x, v], stepCount, rng: 0 });
  return rover;
}

const REVERSE = 0;
const COAST = 1;
const FORWARD = 2;

describe('mountain car dynamics', () => {
  it('matches the check value from the crater floor at full throttle', () => {
    // Sutton & Barto 2018, §10.1, Example 10.1: x = −0.5, v = 0, A = +1
    // (value in REFERENCES.md, computed from the update equations)
    const [x, v] = mountainCarStep([-0.5, 0], 1, MOUNTAIN_CAR_PARAMS);
    expect(v).toBeCloseTo(0.000823157, 9);
    expect(x).toBeCloseTo(-0.499176843, 9);
  });

  it('uses the new velocity to move: x′ = x + v′', () => {
    // Sutton & Barto 2018, Example 10.1
    const [x, v] = mountainCarStep([-0.3, 0.02], 0, MOUNTAIN_CAR_PARAMS);
    expect(v).toBeCloseTo(0.02 - 0.0025 * Math.cos(-0.9), 15);
    expect(x).toBeCloseTo(-0.3 + v, 15);
  });

  it('clips the speed to ±0.07', () => {
    // Sutton & Barto 2018, Example 10.1: −0.07 ≤ v ≤ 0.07
    expect(mountainCarStep([-0.5, 0.07], 1, MOUNTAIN_CAR_PARAMS)[1]).toBe(0.07);
    expect(mountainCarStep([-0.3, -0.07], -1, MOUNTAIN_CAR_PARAMS)[1]).toBe(-0.07);
  });

  it('stops the rover dead at the left crater wall', () => {
    // Sutton & Barto 2018, Example 10.1: at the left bound v is reset to 0
    const [x, v] = mountainCarStep([-1.19, -0.05], -1, MOUNTAIN_CAR_PARAMS);
    expect(x).toBe(-1.2);
    expect(v).toBe(0);
  });

  it('keeps positive speed when leaving the left wall', () => {
    const [x, v] = mountainCarStep([-1.2, 0], 1, MOUNTAIN_CAR_PARAMS);
    // at x = −1.2 the slope term −0.0025·cos(−3.6) is positive, so the rover rolls off the wall
    expect(v).toBeGreaterThan(0);
    expect(x).toBeGreaterThan(-1.2);
  });
});

describe('crater rover (control system)', () => {
  it('describes itself for the header and the Stage', () => {
    const rover = new MountainCar({ seed: 1 });
    expect(rover.description.kind).toBe('mountain-car');
    expect(rover.description.title).toBe('crater rover');
    expect(rover.description.map).toEqual({ position: 0, velocity: 1 });
    expect(rover.description.params).toMatchObject({
      minPosition: -1.2,
      maxPosition: 0.5,
      goalPosition: 0.5,
      maxSpeed: 0.07,
    });
    expect(rover.stateDims.map((dim) => dim.name)).toEqual(['x', 'v']);
    expect(rover.actions).toEqual(['reverse', 'coast', 'forward']);
    expect(rover.timeLimit).toBe(600);
  });

  it('maps actions 0, 1, 2 to throttle −1, 0, +1', () => {
    for (const [action, throttle] of [
      [REVERSE, -1],
      [COAST, 0],
      [FORWARD, 1],
    ]) {
      const rover = roverAt(-0.5, 0);
      rover.step(action);
      expect(rover.getState().vars).toEqual(mountainCarStep([-0.5, 0], throttle, MOUNTAIN_CAR_PARAMS));
    }
  });

  it('reports the check value as a Float32 observation', () => {
    // Sutton & Barto 2018, Example 10.1; Float32 holds about 7 significant digits
    const outcome = roverAt(-0.5, 0).step(FORWARD);
    expect(outcome.observation).toBeInstanceOf(Float32Array);
    expect(outcome.observation[0]).toBeCloseTo(-0.499176843, 6);
    expect(outcome.observation[1]).toBeCloseTo(0.000823157, 6);
  });

  it('starts at rest with x in [−0.6, −0.4)', () => {
    // Sutton & Barto 2018, Example 10.1
    const rover = new MountainCar({ seed: 8 });
    for (let episode = 0; episode < 500; episode += 1) {
      rover.reset();
      const [x, v] = rover.getState().vars;
      expect(x >= -0.6 && x < -0.4).toBe(true);
      expect(v).toBe(0);
    }
  });

  describe('reward shape (ours)', () => {
    it('drains 0.01 per step coasting and 0.015 with the motor on', () => {
      expect(roverAt(-0.5, 0).step(COAST).reward).toBeCloseTo(-0.01, 12);
      expect(roverAt(-0.5, 0).step(FORWARD).reward).toBeCloseTo(-0.015, 12);
      expect(roverAt(-0.5, 0).step(REVERSE).reward).toBeCloseTo(-0.015, 12);
      expect(MOUNTAIN_CAR_REWARD).toEqual({ idleDrain: -0.01, motorDrain: -0.005, rimBonus: 1 });
    });

    it('adds +1 on the step the rover reaches the rim, and ends the episode as a success', () => {
      const outcome = roverAt(0.45, 0.07).step(FORWARD);
      expect(outcome.observation[0]).toBeCloseTo(0.5, 6); // clipped to the right bound
      expect(outcome).toMatchObject({ terminal: true, truncated: false, failed: false, reason: 'reached the rim' });
      expect(outcome.reward).toBeCloseTo(1 - 0.015, 12);
    });
  });

  describe('time limit', () => {
    it('truncates at step 600, not terminal, and counts it as a failure', () => {
      const rover = roverAt(-0.5, 0, 599);
      const outcome = rover.step(COAST);
      expect(outcome).toMatchObject({ terminal: false, truncated: true, failed: true, reason: 'time limit' });
      expect(outcome.reward).toBeCloseTo(-0.01, 12);
    });

    it('reports reaching the rim on the last allowed step as terminal, not truncated', () => {
      const outcome = roverAt(0.45, 0.07, 599).step(FORWARD);
      expect(outcome).toMatchObject({ terminal: true, truncated: false, reason: 'reached the rim' });
    });

    it('counts steps from reset and truncates at a custom limit', () => {
      const rover = new MountainCar({ seed: 4, timeLimit: 3 });
      rover.reset();
      const flags = [rover.step(COAST), rover.step(COAST), rover.step(COAST)].map((o) => [o.terminal, o.truncated]);
      expect(flags).toEqual([
        [false, false],
        [false, false],
        [false, true],
      ]);
      expect(() => rover.step(COAST)).toThrow(/reset/);
    });
  });

  it('gets a rover that pushes along its own velocity out of the crater in time', () => {
    // rocking: throttle in the direction of motion pumps energy in (Sutton & Barto 2018, Example 10.1
    // describe the need to move away from the goal first)
    const rover = new MountainCar({ seed: 21 });
    rover.reset();
    let outcome: StepOutcome | undefined;
    for (let t = 0; t < rover.timeLimit; t += 1) {
      const v = rover.getState().vars[1];
      outcome = rover.step(v < 0 ? REVERSE : FORWARD);
      if (outcome.terminal || outcome.truncated) break;
    }
    expect(outcome?.reason).toBe('reached the rim');
  });

  it('refuses actions other than 0, 1, 2', () => {
    const rover = new MountainCar({ seed: 1 });
    rover.reset();
    expect(() => rover.step(3)).toThrow(/action 3 is not one of 0 \('reverse'\), 1 \('coast'\), 2 \('forward'\)/);
    expect(() => rover.step(-1)).toThrow(RangeError);
  });

  describe('determinism and restore', () => {
    const policy = (t: number): number => Math.floor(t / 17) % 3;

    function run(rover: MountainCar, steps: number): StepOutcome[] {
      const outcomes: StepOutcome[] = [];
      for (let t = 0; t < steps; t += 1) {
        const outcome = rover.step(policy(t));
        outcomes.push(outcome);
        if (outcome.terminal || outcome.truncated) break;
      }
      return outcomes;
    }

    it('gives the same trajectory for the same seed', () => {
      const a = new MountainCar({ seed: 31 });
      const b = new MountainCar({ seed: 31 });
      expect(Array.from(a.reset())).toEqual(Array.from(b.reset()));
      expect(run(a, 100)).toEqual(run(b, 100));
    });

    it('gives a different start for a different seed', () => {
      expect(new MountainCar({ seed: 1 }).reset()[0]).not.toBe(new MountainCar({ seed: 2 }).reset()[0]);
    });

    it('continues bit-identically after getState/setState', () => {
      const rover = new MountainCar({ seed: 55 });
      rover.reset();
      run(rover, 10);
      const saved = rover.getState();
      const original = run(rover, 40);
      const originalEnd = rover.getState();

      rover.setState(saved);
      expect(run(rover, 40)).toEqual(original);
      expect(rover.getState()).toEqual(originalEnd);

      const other = new MountainCar({ seed: 6 });
      other.setState(saved);
      expect(run(other, 40)).toEqual(original);
      expect(Array.from(other.reset())).toEqual(Array.from(rover.reset()));
    });

    it('refuses a state that does not fit', () => {
      const rover = new MountainCar({ seed: 3 });
      expect(() => rover.setState({ vars: [0, 0, 0, 0], stepCount: 0, rng: 0 })).toThrow(/2 numbers/);
      expect(() => rover.setState({ vars: [0, Number.POSITIVE_INFINITY], stepCount: 0, rng: 0 })).toThrow(/\(v\)/);
    });
  });
});

import { describe, expect, it } from 'vitest';
import {
  CART_POLE_PARAMS,
  CART_POLE_REWARD,
  CartPole,
  type CartPoleVars,
  cartPoleDerivatives,
  eulerStep,
} from '../../src/envs/cartpole.ts';
import type { StepOutcome } from '../../src/envs/types.ts';

const ZERO: CartPoleVars = [0, 0, 0, 0];
const ANGLE_LIMIT = (12 * Math.PI) / 180;

/** A trolley placed at `vars` mid-episode, as a what-if would place it. */
function trolleyAt(vars: number[], stepCount = 0): CartPole {
  const trolley = new CartPole({ seed: 1 });
  trolley.setState({ vars, stepCount, rng: 0 });
  return trolley;
}

describe('cart-pole dynamics (frictionless)', () => {
  // Check values from REFERENCES.md, which were computed from the frictionless equations of
  // Barto, Sutton & Anderson (1983), appendix, with the sign of g as corrected by Florian (2007).

  it('accelerates the trolley and tips the mast back under a push from rest', () => {
    // Barto, Sutton & Anderson 1983, appendix; Florian 2007: all-zero state, F = +10 N
    const [xDot, xDdot, thetaDot, thetaDdot] = cartPoleDerivatives(ZERO, 10, CART_POLE_PARAMS);
    expect(xDot).toBe(0);
    expect(thetaDot).toBe(0);
    expect(xDdot).toBeCloseTo(400 / 41, 9); // 9.756097561
    expect(thetaDdot).toBeCloseTo(-600 / 41, 9); // -14.634146341
  });

  it('is mirror-symmetric: a push left gives the opposite accelerations', () => {
    const right = cartPoleDerivatives(ZERO, 10, CART_POLE_PARAMS);
    const left = cartPoleDerivatives(ZERO, -10, CART_POLE_PARAMS);
    expect(left[1]).toBeCloseTo(-right[1], 12);
    expect(left[3]).toBeCloseTo(-right[3], 12);
  });

  it('lets an unpushed mast fall the way it leans (g enters with a positive sign)', () => {
    // Florian 2007: upright is unstable, so θ > 0 must give θ̈ > 0
    const [, , , thetaDdot] = cartPoleDerivatives([0, 0, 0.1, 0], 0, CART_POLE_PARAMS);
    expect(thetaDdot).toBeGreaterThan(0);
  });

  it('matches one and two explicit Euler steps of τ = 0.02 s', () => {
    // Barto, Sutton & Anderson 1983, appendix; Florian 2007 (values computed from the equations)
    const tau = CART_POLE_PARAMS.tau;
    const one = eulerStep(ZERO, cartPoleDerivatives(ZERO, 10, CART_POLE_PARAMS), tau);
    const expectedOne = [0, 0.195121951, 0, -0.292682927];
    one.forEach((value, i) => expect(value).toBeCloseTo(expectedOne[i], 9));

    const two = eulerStep(one, cartPoleDerivatives(one, 10, CART_POLE_PARAMS), tau);
    const expectedTwo = [0.003902439, 0.390243902, -0.005853659, -0.585365854];
    two.forEach((value, i) => expect(value).toBeCloseTo(expectedTwo[i], 9));
  });
});

describe('cart-pole friction (Florian 2007, form re-derived, not checked against the paper)', () => {
  const FRICTION = { ...CART_POLE_PARAMS, cartFriction: 0.3, poleFriction: 0.002 };
  const STATES: CartPoleVars[] = [
    [0, 1, 0.15, 0.7],
    [0, -0.5, -0.1, 2],
    [0.4, 2, 0.2, -1],
  ];

  it('reduces exactly to the frictionless form when both coefficients are 0', () => {
    const state: CartPoleVars = [0.3, -0.7, 0.05, 0.4];
    const explicitZero = { ...CART_POLE_PARAMS, cartFriction: 0, poleFriction: 0 };
    expect(cartPoleDerivatives(state, 10, explicitZero)).toEqual(cartPoleDerivatives(state, 10, CART_POLE_PARAMS));
  });

  it('satisfies the force and torque balances it is solved from', () => {
    // Newton–Euler for trolley and mast, with rail friction μ_c·N_c·sgn(N_c ẋ) (Florian 2007)
    const { cartMass: mc, poleMass: mp, poleHalfLength: l, gravity: g, cartFriction: muC, poleFriction: muP } =
      FRICTION;
    const inertia = (mp * l * l) / 3;
    for (const state of STATES) {
      for (const force of [10, -10]) {
        const [, xDot, theta, thetaDot] = state;
        const [, xDdot, , thetaDdot] = cartPoleDerivatives(state, force, FRICTION);
        const sin = Math.sin(theta);
        const cos = Math.cos(theta);
        // forces from the trolley on the mast, from the mast centre's acceleration
        const horizontal = mp * (xDdot + l * thetaDdot * cos - l * thetaDot * thetaDot * sin);
        const vertical = mp * (g - l * thetaDdot * sin - l * thetaDot * thetaDot * cos);
        const normal = mc * g + vertical;
        const trolleyResidual = mc * xDdot - (force - horizontal - muC * normal * Math.sign(normal * xDot));
        const mastResidual = inertia * thetaDdot - (l * sin * vertical - l * cos * horizontal - muP * thetaDot);
        expect(trolleyResidual).toBeCloseTo(0, 12);
        expect(mastResidual).toBeCloseTo(0, 12);
      }
    }
  });

  it('is mirror-symmetric with friction on', () => {
    for (const state of STATES) {
      const mirrored = state.map((value) => -value) as unknown as CartPoleVars;
      const right = cartPoleDerivatives(state, 10, FRICTION);
      const left = cartPoleDerivatives(mirrored, -10, FRICTION);
      right.forEach((value, i) => expect(left[i]).toBeCloseTo(-value, 12));
    }
  });

  it('slows a coasting trolley with rail friction', () => {
    const params = { ...CART_POLE_PARAMS, cartFriction: 0.05 };
    const [, xDdot] = cartPoleDerivatives([0, 1, 0, 0], 0, params);
    expect(xDdot).toBeLessThan(0);
    const [, backward] = cartPoleDerivatives([0, -1, 0, 0], 0, params);
    expect(backward).toBeCloseTo(-xDdot, 12);
  });

  it('damps the mast swing with pivot friction', () => {
    const state: CartPoleVars = [0, 0, 0, 2];
    const free = cartPoleDerivatives(state, 0, CART_POLE_PARAMS)[3];
    const damped = cartPoleDerivatives(state, 0, { ...CART_POLE_PARAMS, poleFriction: 0.01 })[3];
    expect(damped).toBeLessThan(free);
  });

  it('refuses negative friction coefficients', () => {
    expect(() => new CartPole({ seed: 1, cartFriction: -0.1 })).toThrow(RangeError);
    expect(() => new CartPole({ seed: 1, poleFriction: Number.NaN })).toThrow(RangeError);
  });
});

describe('balancing trolley (control system)', () => {
  it('describes itself for the header and the Stage', () => {
    const trolley = new CartPole({ seed: 1 });
    expect(trolley.description.kind).toBe('cart-pole');
    expect(trolley.description.title).toBe('balancing trolley');
    expect(trolley.description.map).toEqual({ position: 0, velocity: 1, angle: 2, angularVelocity: 3 });
    expect(trolley.description.params).toMatchObject({
      railHalfLength: 2.4,
      poleHalfLength: 0.5,
      force: 10,
      tau: 0.02,
    });
    expect(trolley.description.params.angleLimit).toBeCloseTo(ANGLE_LIMIT, 15);
    expect(trolley.stateDims).toEqual([
      { name: 'x', unit: 'm' },
      { name: 'x_dot', unit: 'm/s' },
      { name: 'theta', unit: 'rad' },
      { name: 'theta_dot', unit: 'rad/s' },
    ]);
    expect(trolley.actions).toEqual(['push left', 'push right']);
    expect(trolley.timeLimit).toBe(400);
  });

  it('maps action 0 to −F and action 1 to +F', () => {
    const left = trolleyAt([0, 0, 0, 0]).step(0).observation;
    const right = trolleyAt([0, 0, 0, 0]).step(1).observation;
    // one Euler step from rest, as above; Float32 observations hold about 7 significant digits
    expect(left[1]).toBeCloseTo(-0.195121951, 6);
    expect(right[1]).toBeCloseTo(0.195121951, 6);
    expect(right[3]).toBeCloseTo(-0.292682927, 6);
  });

  it('simulates in double precision and reports Float32 observations', () => {
    const trolley = trolleyAt([0, 0, 0, 0]);
    trolley.step(1);
    const outcome = trolley.step(1);
    expect(outcome.observation).toBeInstanceOf(Float32Array);
    const vars = trolley.getState().vars;
    const expectedTwo = [0.003902439, 0.390243902, -0.005853659, -0.585365854];
    vars.forEach((value, i) => expect(value).toBeCloseTo(expectedTwo[i], 9));
    expect(Array.from(outcome.observation)).toEqual(Array.from(Float32Array.from(vars)));
  });

  it('starts each variable in U[−0.05, 0.05] at step 0', () => {
    const trolley = new CartPole({ seed: 123 });
    for (let episode = 0; episode < 200; episode += 1) {
      const start = trolley.reset();
      expect(start.every((value) => Math.abs(value) <= 0.05)).toBe(true);
      expect(trolley.getState().stepCount).toBe(0);
    }
  });

  describe('reward shape (ours)', () => {
    it('pays the full upright bonus 0.1 with the mast exactly vertical', () => {
      const outcome = trolleyAt([0, 0, 0, 0]).step(1);
      expect(outcome.reward).toBeCloseTo(CART_POLE_REWARD.uprightBonus, 12);
      expect(outcome.reward).toBeCloseTo(0.1, 12);
    });

    it('scales the bonus by 1 − |θ|/θ_fail', () => {
      const trolley = trolleyAt([0, 0, 0, 0]);
      trolley.step(1);
      const outcome = trolley.step(1);
      const theta = trolley.getState().vars[2];
      expect(theta).toBeCloseTo(-0.005853659, 9);
      expect(outcome.reward).toBeCloseTo(0.1 * (1 - Math.abs(theta) / ANGLE_LIMIT), 12);
      expect(outcome.reward).toBeCloseTo(0.097205, 6);
    });

    it('pays −1 on the step the mast falls past 12°', () => {
      const outcome = trolleyAt([0, 0, ANGLE_LIMIT - 0.001, 1]).step(1);
      expect(outcome).toMatchObject({ reward: -1, terminal: true, truncated: false, failed: true, reason: 'mast fell' });
    });

    it('pays −1 on the step the trolley leaves the 2.4 m rail', () => {
      const outcome = trolleyAt([2.39, 1, 0, 0]).step(1);
      expect(outcome).toMatchObject({
        reward: -1,
        terminal: true,
        truncated: false,
        failed: true,
        reason: 'trolley left the rail',
      });
    });

    it('does not fail exactly at the limit, only past it', () => {
      const outcome = trolleyAt([2.4, 0, 0, 0]).step(1); // x stays 2.4 after this Euler step
      expect(outcome.terminal).toBe(false);
    });
  });

  describe('time limit', () => {
    it('truncates at step 400 (8 s) without calling it terminal', () => {
      const trolley = trolleyAt([0, 0, 0, 0], 399);
      const outcome = trolley.step(1);
      expect(outcome).toMatchObject({ terminal: false, truncated: true, failed: false, reason: 'time limit' });
      expect(outcome.reward).toBeCloseTo(0.1, 12); // still the upright bonus: the mast did not fall
      expect(trolley.getState().stepCount).toBe(400);
    });

    it('counts steps from reset and truncates at a custom limit', () => {
      const trolley = new CartPole({ seed: 9, timeLimit: 5 });
      trolley.reset();
      const outcomes = Array.from({ length: 5 }, (_, i) => trolley.step(i % 2));
      expect(outcomes.map((o) => o.truncated)).toEqual([false, false, false, false, true]);
      expect(outcomes.every((o) => !o.terminal)).toBe(true);
      expect(outcomes.slice(0, 4).every((o) => o.reason === undefined)).toBe(true);
    });

    it('reports a fall on the last allowed step as terminal, not truncated', () => {
      const outcome = trolleyAt([0, 0, ANGLE_LIMIT - 0.001, 1], 399).step(1);
      expect(outcome).toMatchObject({ terminal: true, truncated: false, reason: 'mast fell' });
    });

    it('refuses to step past the end of an episode until reset', () => {
      const trolley = new CartPole({ seed: 9, timeLimit: 1 });
      expect(() => trolley.step(0)).toThrow(/before reset/);
      trolley.reset();
      trolley.step(0);
      expect(() => trolley.step(0)).toThrow(/time limit.*reset/);
      trolley.reset();
      expect(() => trolley.step(0)).not.toThrow();
    });
  });

  it('refuses actions other than 0 and 1', () => {
    const trolley = new CartPole({ seed: 1 });
    trolley.reset();
    expect(() => trolley.step(2)).toThrow(/action 2 is not one of 0 \('push left'\), 1 \('push right'\)/);
    expect(() => trolley.step(0.5)).toThrow(RangeError);
  });

  describe('determinism and restore', () => {
    const policy = (t: number): number => (t * 7) % 3 === 0 ? 1 : 0;

    function run(trolley: CartPole, steps: number): StepOutcome[] {
      const outcomes: StepOutcome[] = [];
      for (let t = 0; t < steps; t += 1) {
        const outcome = trolley.step(policy(t));
        outcomes.push(outcome);
        if (outcome.terminal || outcome.truncated) break;
      }
      return outcomes;
    }

    it('gives the same trajectory for the same seed', () => {
      const a = new CartPole({ seed: 2024 });
      const b = new CartPole({ seed: 2024 });
      expect(Array.from(a.reset())).toEqual(Array.from(b.reset()));
      expect(run(a, 60)).toEqual(run(b, 60));
      expect(Array.from(a.reset())).toEqual(Array.from(b.reset()));
    });

    it('gives a different start for a different seed', () => {
      expect(Array.from(new CartPole({ seed: 1 }).reset())).not.toEqual(Array.from(new CartPole({ seed: 2 }).reset()));
    });

    it('continues bit-identically after getState/setState', () => {
      const trolley = new CartPole({ seed: 77 });
      trolley.reset();
      run(trolley, 5);
      const saved = trolley.getState();
      const original = run(trolley, 8);
      const originalEnd = trolley.getState();

      trolley.setState(saved);
      expect(run(trolley, 8)).toEqual(original);
      expect(trolley.getState()).toEqual(originalEnd);

      // a fresh instance with another seed continues the same way, generator included
      const other = new CartPole({ seed: 5 });
      other.setState(saved);
      expect(run(other, 8)).toEqual(original);
      expect(Array.from(other.reset())).toEqual(Array.from(trolley.reset()));
    });

    it('hands out copies, so a saved state cannot be changed behind its back', () => {
      const trolley = new CartPole({ seed: 3 });
      trolley.reset();
      const saved = trolley.getState();
      saved.vars[0] = 99;
      expect(trolley.getState().vars[0]).not.toBe(99);
    });

    it('refuses a state that does not fit', () => {
      const trolley = new CartPole({ seed: 3 });
      expect(() => trolley.setState({ vars: [0, 0, 0], stepCount: 0, rng: 0 })).toThrow(/4 numbers/);
      expect(() => trolley.setState({ vars: [0, 0, Number.NaN, 0], stepCount: 0, rng: 0 })).toThrow(/theta/);
      expect(() => trolley.setState({ vars: [0, 0, 0, 0], stepCount: -1, rng: 0 })).toThrow(/stepCount/);
      expect(() => trolley.setState({ vars: [0, 0, 0, 0], stepCount: 0, rng: 2 ** 32 })).toThrow(/rng/);
    });
  });
});

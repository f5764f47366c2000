/**
 * Balancing trolley: a trolley on a short rail keeps a camera mast upright.
 *
 * Physics model: the cart-pole of Barto, Sutton & Anderson (1983), IEEE Trans. SMC-13(5), appendix,
 * with the corrections of Florian (2005, rev. 2007), "Correct equations for the dynamics of the
 * cart-pole system": gravity enters with g = +9.8 (the 1983 appendix lists g = −9.8, from memory),
 * and cart-on-rail friction is proportional to the normal force N_c rather than a constant.
 *
 * Signs: x grows to the right, F > 0 pushes right, θ = 0 is upright and θ > 0 leans toward +x.
 * A Stage drawing the mast should use the same convention.
 */

import { checkAction, checkNonNegative, checkPhysicalState, checkTimeLimit } from './checks.ts';
import { SeededRandom } from './random.ts';
import type { ControlSystem, PhysicalState, StateDim, StepOutcome, SystemDescription } from './types.ts';

/** (x, ẋ, θ, θ̇), or their time derivatives (ẋ, ẍ, θ̇, θ̈). */
export type CartPoleVars = readonly [number, number, number, number];

export interface CartPoleParams {
  /** m_c, kg */
  cartMass: number;
  /** m_p, kg */
  poleMass: number;
  /** l, m: half the mast length (pivot to centre of mass) */
  poleHalfLength: number;
  /** g, m/s² */
  gravity: number;
  /** |F|, N: the push of either action */
  force: number;
  /** Euler step τ, s */
  tau: number;
  /** |x| beyond this, m, and the trolley has left the rail */
  railHalfLength: number;
  /** |θ| beyond this, rad, and the mast has fallen */
  angleLimit: number;
  /** μ_c: Coulomb friction of trolley on rail, dimensionless (0 = frictionless) */
  cartFriction: number;
  /** μ_p: viscous friction at the mast pivot, N·m·s (0 = frictionless) */
  poleFriction: number;
}

/** Barto, Sutton & Anderson (1983), appendix; frictionless by default. */
export const CART_POLE_PARAMS: Readonly<CartPoleParams> = Object.freeze({
  cartMass: 1.0,
  poleMass: 0.1,
  poleHalfLength: 0.5,
  gravity: 9.8,
  force: 10,
  tau: 0.02,
  railHalfLength: 2.4,
  angleLimit: (12 * Math.PI) / 180,
  cartFriction: 0,
  poleFriction: 0,
});

/** Our reward shape: a small bonus for keeping the mast near vertical, a fixed penalty for failing. */
export const CART_POLE_REWARD = Object.freeze({ uprightBonus: 0.1, failure: -1 });

/** 400 steps of τ = 0.02 s: an 8 s shift for the trolley. */
export const CART_POLE_TIME_LIMIT = 400;

const START_SPREAD = 0.05;

/**
 * Time derivatives (ẋ, ẍ, θ̇, θ̈) at `vars` under horizontal force `force` (N).
 *
 * The force and torque balances these come from (θ from vertical, I = m_p l²/3 about the centre):
 *   trolley + mast, horizontal:  (m_c+m_p) ẍ + m_p l (θ̈ cosθ − θ̇² sinθ) = F − μ_c N_c sgn(N_c ẋ)
 *   trolley, vertical:           N_c = (m_c+m_p) g − m_p l (θ̈ sinθ + θ̇² cosθ)
 *   mast, about the pivot:       (4/3) l θ̈ = g sinθ − ẍ cosθ − μ_p θ̇ / (m_p l)
 * Friction on the rail scales with the normal force N_c, which itself depends on θ̈ (Florian 2007);
 * so θ̈ is first solved assuming N_c > 0 (true while gravity presses the trolley onto its rail,
 * unless the mast whips round violently) and solved again once if N_c comes out negative.
 *
 * Not verified against Florian's paper, which could not be read here. The public copies of his
 * friction form that we could read print the θ̈ denominator as l (4/3 − m_p cosθ (cosθ − μ_c s)/(m_c+m_p));
 * eliminating ẍ and N_c from the balances above gives (cosθ − μ_c s sinθ) instead (N_c involves
 * θ̈ only through sinθ). Only the sinθ form keeps the model mirror-symmetric and satisfies the
 * balances exactly; the tests check both. With μ_c = μ_p = 0 the two agree and reduce to the
 * frictionless form in REFERENCES.md, which the tests pin. Sticking friction at ẋ = 0 is not
 * modelled (sgn 0 = 0).
 */
export function cartPoleDerivatives(vars: readonly number[], force: number, params: CartPoleParams): CartPoleVars {
  const [, xDot, theta, thetaDot] = vars;
  const { cartMass, poleMass, poleHalfLength: l, gravity: g, cartFriction: muC, poleFriction: muP } = params;
  const totalMass = cartMass + poleMass;
  const sin = Math.sin(theta);
  const cos = Math.cos(theta);
  const spin = thetaDot * thetaDot;

  // θ̈ = [g sinθ + cosθ·((−F − m_p l θ̇² (sinθ + μ_c s cosθ))/(m_c+m_p) + μ_c g s) − μ_p θ̇/(m_p l)]
  //     / [l (4/3 − m_p cosθ (cosθ − μ_c s sinθ)/(m_c+m_p))],   s = sgn(N_c ẋ)
  const angularAcceleration = (s: number): number => {
    const numerator =
      g * sin +
      cos * ((-force - poleMass * l * spin * (sin + muC * s * cos)) / totalMass + muC * g * s) -
      (muP * thetaDot) / (poleMass * l);
    const denominator = l * (4 / 3 - (poleMass * cos * (cos - muC * s * sin)) / totalMass);
    return numerator / denominator;
  };
  const normalForce = (thetaDdot: number): number => totalMass * g - poleMass * l * (thetaDdot * sin + spin * cos);

  let thetaDdot = angularAcceleration(Math.sign(xDot));
  let normal = normalForce(thetaDdot);
  if (normal < 0) {
    thetaDdot = angularAcceleration(-Math.sign(xDot));
    normal = normalForce(thetaDdot);
  }
  const xDdot =
    (force + poleMass * l * (spin * sin - thetaDdot * cos) - muC * normal * Math.sign(normal * xDot)) / totalMass;
  return [xDot, xDdot, thetaDot, thetaDdot];
}

/** Explicit Euler, as in Barto, Sutton & Anderson (1983): every variable moves by τ times its rate at the start of the step. */
export function eulerStep(vars: readonly number[], derivatives: readonly number[], tau: number): CartPoleVars {
  return [
    vars[0] + tau * derivatives[0],
    vars[1] + tau * derivatives[1],
    vars[2] + tau * derivatives[2],
    vars[3] + tau * derivatives[3],
  ];
}

export interface CartPoleOptions {
  seed: number;
  /** Steps before truncation; default 400 (8 s). */
  timeLimit?: number;
  /** μ_c, default 0. */
  cartFriction?: number;
  /** μ_p, default 0. */
  poleFriction?: number;
}

const KIND = 'cart-pole';
const STATE_DIMS: readonly StateDim[] = Object.freeze([
  { name: 'x', unit: 'm' },
  { name: 'x_dot', unit: 'm/s' },
  { name: 'theta', unit: 'rad' },
  { name: 'theta_dot', unit: 'rad/s' },
]);
const ACTIONS: readonly string[] = Object.freeze(['push left', 'push right']);

export class CartPole implements ControlSystem {
  readonly description: SystemDescription;
  readonly stateDims = STATE_DIMS;
  readonly actions = ACTIONS;
  readonly timeLimit: number;
  readonly params: Readonly<CartPoleParams>;

  #rng: SeededRandom;
  #vars: CartPoleVars = [0, 0, 0, 0];
  #stepCount = 0;
  /** Why stepping is refused: before the first reset, or after the episode ended. */
  #blocked: string | undefined = 'step() called before reset()';

  constructor(options: CartPoleOptions) {
    const timeLimit = options.timeLimit ?? CART_POLE_TIME_LIMIT;
    checkTimeLimit(KIND, timeLimit);
    const cartFriction = options.cartFriction ?? 0;
    const poleFriction = options.poleFriction ?? 0;
    checkNonNegative(KIND, 'cartFriction', cartFriction);
    checkNonNegative(KIND, 'poleFriction', poleFriction);

    this.timeLimit = timeLimit;
    this.params = Object.freeze({ ...CART_POLE_PARAMS, cartFriction, poleFriction });
    this.#rng = new SeededRandom(options.seed);
    this.description = {
      kind: KIND,
      title: 'balancing trolley',
      map: { position: 0, velocity: 1, angle: 2, angularVelocity: 3 },
      params: { ...this.params },
    };
  }

  reset(): Float32Array {
    const draw = (): number => this.#rng.uniform(-START_SPREAD, START_SPREAD);
    this.#vars = [draw(), draw(), draw(), draw()];
    this.#stepCount = 0;
    this.#blocked = undefined;
    return Float32Array.from(this.#vars);
  }

  step(action: number): StepOutcome {
    if (this.#blocked !== undefined) throw new Error(`${KIND}: ${this.#blocked}`);
    checkAction(KIND, action, ACTIONS);

    const p = this.params;
    const force = action === 1 ? p.force : -p.force;
    const next = eulerStep(this.#vars, cartPoleDerivatives(this.#vars, force, p), p.tau);
    this.#vars = next;
    this.#stepCount += 1;
    const observation = Float32Array.from(next);

    const [x, , theta] = next;
    const reason =
      Math.abs(theta) > p.angleLimit ? 'mast fell' : Math.abs(x) > p.railHalfLength ? 'trolley left the rail' : undefined;
    if (reason !== undefined) {
      this.#blocked = `the episode has ended (${reason}); call reset()`;
      return { observation, reward: CART_POLE_REWARD.failure, terminal: true, truncated: false, reason, failed: true };
    }

    const reward = CART_POLE_REWARD.uprightBonus * (1 - Math.abs(theta) / p.angleLimit);
    if (this.#stepCount >= this.timeLimit) {
      this.#blocked = 'the episode has ended (time limit); call reset()';
      return { observation, reward, terminal: false, truncated: true, reason: 'time limit', failed: false };
    }
    return { observation, reward, terminal: false, truncated: false };
  }

  getState(): PhysicalState {
    return { vars: [...this.#vars], stepCount: this.#stepCount, rng: this.#rng.state };
  }

  /** Restoring a state resumes the episode from it, even one read after its end, so a what-if can branch anywhere. */
  setState(state: PhysicalState): void {
    checkPhysicalState(KIND, state, STATE_DIMS.map((dim) => dim.name));
    const [x, xDot, theta, thetaDot] = state.vars;
    this.#vars = [x, xDot, theta, thetaDot];
    this.#stepCount = state.stepCount;
    this.#rng.state = state.rng;
    this.#blocked = undefined;
  }
}

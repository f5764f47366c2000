/**
 * A tiny seeded generator for the agent's own draws (ε-greedy coin flips, random actions, minibatch
 * indices). It lives here rather than in `src/envs` so that the agent's random streams never share
 * state with a control system's: changing how often the agent draws must not move the start states.
 *
 * Algorithm: mulberry32, a 32-bit state generator with a multiply-xorshift output (from memory;
 * public-domain code by T. Ettinger, 2017). Its period is 2³², ample for a few million draws per run.
 */
export class Random {
  private state: number;

  constructor(seed: number) {
    this.state = seed >>> 0;
  }

  /** A float in [0, 1). */
  next(): number {
    this.state = (this.state + 0x6d2b79f5) >>> 0;
    let t = this.state;
    t = Math.imul(t ^ (t >>> 15), t | 1);
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61);
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
  }

  /** An integer in [0, n). Multiplying keeps the bias below n/2³², negligible for n ≪ 2³². */
  nextInt(n: number): number {
    return Math.floor(this.next() * n);
  }

  /** The generator's state, so a run can be resumed exactly. */
  get seedState(): number {
    return this.state;
  }
}

/**
 * Derive a seed for one of a run's separate streams (stream 0, 1, 2…) from the run seed, so a single
 * `seed` setting fixes everything while the streams start far apart. Mixing uses the 32-bit
 * finaliser of MurmurHash3 (from memory; A. Appleby), which spreads nearby inputs across all bits.
 */
export function deriveSeed(seed: number, stream: number): number {
  return mix32((seed >>> 0) ^ mix32(stream + 1));
}

function mix32(x: number): number {
  let h = x >>> 0;
  h = Math.imul(h ^ (h >>> 16), 0x85ebca6b);
  h = Math.imul(h ^ (h >>> 13), 0xc2b2ae35);
  return (h ^ (h >>> 16)) >>> 0;
}

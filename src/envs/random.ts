/**
 * A seeded pseudo-random generator whose whole state is one unsigned 32-bit integer, so a control
 * system (or an agent) can store it in `PhysicalState.rng` and continue bit-identically after a
 * restore. The mixing function is mulberry32 (Tommy Ettinger, 2017, public domain; from memory):
 * a Weyl counter stepped by 0x6D2B79F5 and passed through a multiply-xorshift finaliser. Its
 * period is 2^32, ample for start states, ε-greedy draws and minibatch indices, and it is not
 * meant for anything cryptographic.
 */

const TWO_POW_32 = 4294967296;

export class SeededRandom {
  #state: number;

  /** Any finite number is accepted as a seed; it is reduced to its low 32 bits. */
  constructor(seed: number) {
    this.#state = toUint32(seed, 'seed');
  }

  /** The whole generator state; assigning a value read earlier replays the same sequence. */
  get state(): number {
    return this.#state;
  }

  set state(value: number) {
    if (!Number.isInteger(value) || value < 0 || value >= TWO_POW_32) {
      throw new RangeError(`SeededRandom: state must be an integer in [0, 2^32), got ${value}`);
    }
    this.#state = value;
  }

  /** A number in [0, 1) with 32 bits of resolution. */
  next(): number {
    this.#state = (this.#state + 0x6d2b79f5) >>> 0;
    let t = this.#state;
    t = Math.imul(t ^ (t >>> 15), t | 1);
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61);
    return ((t ^ (t >>> 14)) >>> 0) / TWO_POW_32;
  }

  /** A number in [lo, hi). */
  uniform(lo: number, hi: number): number {
    if (!(Number.isFinite(lo) && Number.isFinite(hi) && lo <= hi)) {
      throw new RangeError(`SeededRandom.uniform: need finite lo <= hi, got lo=${lo}, hi=${hi}`);
    }
    // lo + (hi − lo)·u can round up to hi for u just below 1; the interval is promised half-open.
    const value = lo + (hi - lo) * this.next();
    return value < hi ? value : lo;
  }

  /** An integer in {0, …, n − 1}. */
  int(n: number): number {
    if (!Number.isInteger(n) || n < 1 || n > TWO_POW_32) {
      throw new RangeError(`SeededRandom.int: n must be an integer in [1, 2^32], got ${n}`);
    }
    return Math.floor(this.next() * n);
  }
}

export function createRandom(seed: number): SeededRandom {
  return new SeededRandom(seed);
}

function toUint32(value: number, what: string): number {
  if (!Number.isFinite(value)) {
    throw new RangeError(`SeededRandom: ${what} must be a finite number, got ${value}`);
  }
  // Reduce modulo 2^32 so negative and large seeds are welcome rather than silently truncated to 0.
  const reduced = Math.trunc(value) % TWO_POW_32;
  return reduced < 0 ? reduced + TWO_POW_32 : reduced;
}

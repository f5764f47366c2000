/**
 * Experience replay (Mnih et al. 2015): a fixed-size ring of transitions (s, a, r, s', terminal),
 * sampled uniformly into minibatches. Columnar typed arrays, so adding a transition allocates nothing
 * and a minibatch is a handful of `set` calls away from a tensor.
 *
 * Only `terminal` is stored as "done for bootstrapping": a step cut off by the time limit is stored
 * as non-terminal and its target still bootstraps from s' (Pardo et al. 2018).
 */
import type { Random } from './random.ts';

/** Preallocated arrays one minibatch is gathered into; rows are row-major, `size` × stateSize. */
export interface Minibatch {
  size: number;
  states: Float32Array;
  actions: Int32Array;
  rewards: Float32Array;
  nextStates: Float32Array;
  terminals: Uint8Array;
}

export function createMinibatch(size: number, stateSize: number): Minibatch {
  return {
    size,
    states: new Float32Array(size * stateSize),
    // Int32 because that is the dtype TensorFlow.js wants for one-hot and gather indices.
    actions: new Int32Array(size),
    rewards: new Float32Array(size),
    nextStates: new Float32Array(size * stateSize),
    terminals: new Uint8Array(size),
  };
}

export class ReplayBuffer {
  readonly capacity: number;
  readonly stateSize: number;
  readonly states: Float32Array;
  readonly nextStates: Float32Array;
  readonly actions: Uint32Array;
  readonly rewards: Float32Array;
  readonly terminals: Uint8Array;
  /** Transitions held, up to `capacity`. */
  size = 0;
  /** Slot the next transition goes into; the oldest one once the ring is full. */
  private writeAt = 0;
  private readonly indexBuffer: Uint32Array;

  /** `maxBatch` sizes the index buffer that `sampleIndices` fills, so sampling allocates nothing. */
  constructor(capacity: number, stateSize: number, maxBatch: number) {
    if (!Number.isInteger(capacity) || capacity < 1) throw new RangeError(`replay capacity ${capacity}: expected an integer ≥ 1`);
    if (!Number.isInteger(stateSize) || stateSize < 1) throw new RangeError(`replay stateSize ${stateSize}: expected an integer ≥ 1`);
    this.capacity = capacity;
    this.stateSize = stateSize;
    this.states = new Float32Array(capacity * stateSize);
    this.nextStates = new Float32Array(capacity * stateSize);
    this.actions = new Uint32Array(capacity);
    this.rewards = new Float32Array(capacity);
    this.terminals = new Uint8Array(capacity);
    this.indexBuffer = new Uint32Array(maxBatch);
  }

  /** Store one transition, overwriting the oldest when full. Returns the slot used. */
  add(state: ArrayLike<number>, action: number, reward: number, nextState: ArrayLike<number>, terminal: boolean): number {
    const d = this.stateSize;
    if (state.length !== d || nextState.length !== d) {
      throw new RangeError(`replay add: state has ${state.length} and nextState ${nextState.length} values; expected ${d} each`);
    }
    const slot = this.writeAt;
    this.states.set(state, slot * d);
    this.nextStates.set(nextState, slot * d);
    this.actions[slot] = action;
    this.rewards[slot] = reward;
    this.terminals[slot] = terminal ? 1 : 0;
    this.writeAt = slot + 1 === this.capacity ? 0 : slot + 1;
    if (this.size < this.capacity) this.size++;
    return slot;
  }

  /**
   * Draw `batch` slots uniformly with replacement from those filled (Mnih et al. 2015 sample
   * uniformly; with replacement is common practice). Returns a view of the internal index buffer,
   * valid until the next call.
   */
  sampleIndices(batch: number, rng: Random): Uint32Array {
    if (this.size === 0) throw new RangeError('replay sampleIndices: the buffer is empty');
    if (batch > this.indexBuffer.length) {
      throw new RangeError(`replay sampleIndices: batch ${batch} exceeds maxBatch ${this.indexBuffer.length}`);
    }
    const out = batch === this.indexBuffer.length ? this.indexBuffer : this.indexBuffer.subarray(0, batch);
    for (let i = 0; i < batch; i++) out[i] = rng.nextInt(this.size);
    return out;
  }

  /** Copy the transitions at `indices` into the first `indices.length` rows of `into`. */
  gather(indices: ArrayLike<number>, into: Minibatch): void {
    const d = this.stateSize;
    if (indices.length > into.size) throw new RangeError(`replay gather: ${indices.length} indices for a minibatch of ${into.size}`);
    for (let i = 0; i < indices.length; i++) {
      const slot = indices[i];
      if (slot >= this.size) throw new RangeError(`replay gather: slot ${slot} is not filled (size ${this.size})`);
      // A plain loop: for a handful of state dimensions it beats `set(subarray(…))`, which makes a view per row.
      for (let k = 0, from = slot * d, to = i * d; k < d; k++) {
        into.states[to + k] = this.states[from + k];
        into.nextStates[to + k] = this.nextStates[from + k];
      }
      into.actions[i] = this.actions[slot];
      into.rewards[i] = this.rewards[slot];
      into.terminals[i] = this.terminals[slot];
    }
  }
}

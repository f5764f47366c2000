/**
 * Target-network answers kept between the analysis worker's requests. The episode's series and
 * the whole file's suspects both need Q_target at every next state of an episode, and on a long
 * episode that forward pass is most of the work (seconds for a million steps); with this, the
 * second request reuses the first's answer. Bounded: the least recently used answers go first
 * once their bytes pass the budget.
 */
import type { QFunction } from '../../src/analysis/series.ts';
import type { DenseLayer } from '../../formats/types.ts';

interface Entry {
  n: number;
  inputLength: number;
  inputPrint: number;
  output: Float32Array;
}

export class ForwardCache {
  /** In order of last use, oldest first (a Map iterates in insertion order). */
  private entries = new Map<string, Entry>();
  private bytes = 0;

  constructor(readonly budgetBytes = 64 * 1024 * 1024) {}

  /**
   * `q` answering from the cache for `place` (say file, episode and network) when it is asked
   * about the same states again. The states are checked, not assumed, so a caller that asks about
   * other states under the same place is answered afresh. The answer is shared between callers:
   * they must not write to it or transfer it.
   */
  wrap(place: string, q: QFunction): QFunction {
    return (states, n) => {
      const inputPrint = fingerprint(states);
      const hit = this.entries.get(place);
      if (hit && hit.n === n && hit.inputLength === states.length && hit.inputPrint === inputPrint) {
        this.entries.delete(place);
        this.entries.set(place, hit);
        return hit.output;
      }
      const output = q(states, n);
      this.store(place, { n, inputLength: states.length, inputPrint, output });
      return output;
    };
  }

  /** Bytes of answers held. */
  get heldBytes(): number {
    return this.bytes;
  }

  private store(place: string, entry: Entry): void {
    this.drop(place);
    if (entry.output.byteLength > this.budgetBytes) return;
    this.entries.set(place, entry);
    this.bytes += entry.output.byteLength;
    for (const oldest of this.entries.keys()) {
      if (this.bytes <= this.budgetBytes) break;
      this.drop(oldest);
    }
  }

  private drop(place: string): void {
    const entry = this.entries.get(place);
    if (!entry) return;
    this.bytes -= entry.output.byteLength;
    this.entries.delete(place);
  }
}

/** FNV-1a (32-bit) over a float array's bits, a word at a time: tells one input from another. */
export function fingerprint(values: Float32Array, seed = 0x811c9dc5): number {
  const words = new Uint32Array(values.buffer, values.byteOffset, values.length);
  let h = seed >>> 0;
  for (let i = 0; i < words.length; i++) h = Math.imul(h ^ words[i], 0x01000193);
  return h >>> 0;
}

/** A network's identity by content: its sizes, activations, weights and biases. */
export function layersFingerprint(layers: readonly DenseLayer[]): string {
  let h = 0x811c9dc5;
  const shape: string[] = [];
  for (const l of layers) {
    shape.push(`${l.inputs}x${l.outputs}:${l.activation}`);
    h = fingerprint(l.weights, h);
    h = fingerprint(l.bias, h);
  }
  return `${shape.join(',')}#${h.toString(16)}`;
}

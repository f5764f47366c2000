/**
 * A snapshot's id names its weights, so that two records with the same weights share an id and a
 * step block can say which weights were in force with a short string. SPEC.md, "Snapshot id":
 * SHA-256 over, for each layer in order, u32 inputs, u32 outputs, the activation name in UTF-8,
 * one zero byte, the weights (f32, row-major [inputs][outputs]) and the bias (f32); the id is the
 * first 16 hex digits (64 bits) of the digest.
 */
import { bytesOf } from './columns.ts';
import { Sha256 } from './sha256.ts';
import type { DenseLayer } from './types.ts';

const utf8 = new TextEncoder();

export function snapshotId(layers: readonly DenseLayer[]): string {
  const h = new Sha256();
  const sizes = new Uint8Array(8);
  const dv = new DataView(sizes.buffer);
  for (const l of layers) {
    dv.setUint32(0, l.inputs, true);
    dv.setUint32(4, l.outputs, true);
    h.update(sizes);
    h.update(utf8.encode(l.activation));
    h.update(new Uint8Array(1));
    h.update(bytesOf(l.weights));
    h.update(bytesOf(l.bias));
  }
  return Array.from(h.digest().subarray(0, 8), (x) => x.toString(16).padStart(2, '0')).join('');
}

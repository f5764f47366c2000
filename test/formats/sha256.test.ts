import { createHash } from 'node:crypto';
import { describe, expect, it } from 'vitest';
import { Sha256, sha256Hex } from '../../formats/sha256.ts';
import { snapshotId } from '../../formats/snapshot-id.ts';
import type { DenseLayer } from '../../formats/types.ts';
import { seededBytes } from './seeded-bytes.ts';

const ascii = (s: string) => new TextEncoder().encode(s);
const nodeSha256 = (...parts: Uint8Array[]) => {
  const h = createHash('sha256');
  for (const p of parts) h.update(p);
  return h.digest('hex');
};

describe('sha256 (FIPS 180-4)', () => {
  it.each([
    // NIST (2002), FIPS 180-2, Appendix B.1 "SHA-256 Example (One-Block Message)"; same
    // example in NIST CSRC "Examples with Intermediate Values: SHA-256" for FIPS 180-4 (2015).
    ['the one-block message "abc"', 'abc', 'ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad'],
    // NIST CAVP (2011), SHA Validation System, byte-oriented short messages, SHA256ShortMsg, Len = 0.
    ['the empty message', '', 'e3b0c44298fc1c149afbf4c8996fb92427ae41e4649b934ca495991b7852b855'],
    // NIST (2002), FIPS 180-2, Appendix B.2 "SHA-256 Example (Multi-Block Message)", 448 bits.
    [
      'the 448-bit two-block message',
      'abcdbcdecdefdefgefghfghighijhijkijkljklmklmnlmnomnopnopq',
      '248d6a61d20638b8e5c026930c3e6039a33ce45964ff2167f6ecedd419db06c1',
    ],
  ])('hashes %s to the published digest', (_, message, digest) => {
    expect(sha256Hex(ascii(message))).toBe(digest);
  });

  it('hashes one million "a" to the published digest', () => {
    // NIST (2002), FIPS 180-2, Appendix B.3 "SHA-256 Example (Long Message)".
    expect(sha256Hex(new Uint8Array(1_000_000).fill(0x61))).toBe(
      'cdc76e5c9914fb9281a1c7e284d73e67f1809a48a497200e046d39ccc7112cd0',
    );
  });

  it('equals node:crypto on random messages of every length 0..200 and of 100 000 bytes', () => {
    for (const length of [...Array.from({ length: 201 }, (_, n) => n), 100_000]) {
      const message = seededBytes(length, 900 + length);
      expect(sha256Hex(message), `length ${length}`).toBe(nodeSha256(message));
    }
  });

  it('gives the same digest however the message is split into updates', () => {
    const message = seededBytes(1000, 3);
    const expected = nodeSha256(message);
    for (const pieces of [[0, 1000], [1, 999], [55, 9, 64, 872], [63, 1, 64, 64, 808], [500, 0, 500]]) {
      const h = new Sha256();
      let at = 0;
      for (const size of pieces) {
        h.update(message.subarray(at, at + size));
        at += size;
      }
      const hex = Array.from(h.digest(), (x) => x.toString(16).padStart(2, '0')).join('');
      expect(hex, `pieces ${pieces.join('+')}`).toBe(expected);
    }
    expect(sha256Hex(message.subarray(0, 300), message.subarray(300))).toBe(expected);
  });
});

describe('snapshot id (SPEC.md, "Snapshot id")', () => {
  const layers: DenseLayer[] = [
    { inputs: 2, outputs: 3, activation: 'tanh', weights: Float32Array.of(1, 2, 3, 4, 5, 6), bias: Float32Array.of(-1, 0, 1) },
    { inputs: 3, outputs: 1, activation: 'linear', weights: Float32Array.of(0.5, 0.25, 0.125), bias: Float32Array.of(7) },
  ];

  /** The id computed from the SPEC's description with node:crypto. */
  function idBySpec(ls: DenseLayer[]): string {
    const parts: Uint8Array[] = [];
    for (const l of ls) {
      const sizes = new Uint8Array(8);
      new DataView(sizes.buffer).setUint32(0, l.inputs, true);
      new DataView(sizes.buffer).setUint32(4, l.outputs, true);
      parts.push(sizes, ascii(l.activation), new Uint8Array(1));
      parts.push(new Uint8Array(l.weights.buffer.slice(0)), new Uint8Array(l.bias.buffer.slice(0)));
    }
    return nodeSha256(...parts).slice(0, 16);
  }

  it('is the first 16 hex digits of SHA-256 over sizes, activation, a zero byte, weights and bias', () => {
    expect(snapshotId(layers)).toBe(idBySpec(layers));
    expect(snapshotId(layers)).toMatch(/^[0-9a-f]{16}$/);
  });

  it('changes when one weight, the activation or the layer order changes', () => {
    const oneWeight = [{ ...layers[0], weights: Float32Array.of(1, 2, 3, 4, 5, 6.5) }, layers[1]];
    const activation = [{ ...layers[0], activation: 'relu' as const }, layers[1]];
    const ids = new Set([snapshotId(layers), snapshotId(oneWeight), snapshotId(activation), snapshotId([layers[1]])]);
    expect(ids.size).toBe(4);
  });
});

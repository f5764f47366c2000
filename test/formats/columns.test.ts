import { describe, expect, it } from 'vitest';
import { decodeArray, encodeArray, type TypedArray } from '../../formats/columns.ts';
import { decodeArrayMapBySpec, shuffleDeflateBySpec, xorShuffleDeflateBySpec } from './columns-by-spec.ts';
import { shuffleBytes, unshuffleBytes } from '../../formats/shuffle.ts';
import { seededBytes } from './seeded-bytes.ts';

const bytesOf = (a: TypedArray) => new Uint8Array(a.buffer, a.byteOffset, a.byteLength);
const hexBits = (a: Float32Array) => Array.from(new Uint32Array(a.buffer, a.byteOffset, a.length), (x) => x.toString(16).padStart(8, '0'));

/** Float32 values whose bit patterns the codec must not touch (IEEE 754-2008 §3.4 encodings). */
const SPECIAL_F32_BITS = [
  0x7fc00000, // quiet NaN, the canonical one
  0x7fc00001, // quiet NaN with a payload
  0xffc12345, // negative quiet NaN with a payload
  0x7f800001, // signalling NaN
  0x80000000, // −0
  0x7f800000, // +Infinity
  0xff800000, // −Infinity
  0x00000001, // smallest positive subnormal
  0x807fffff, // largest negative subnormal
  0x00800000, // smallest positive normal
  0x7f7fffff, // largest finite
];

describe('byte shuffle', () => {
  it.each([
    [1, [1, 2, 3, 4, 5, 6], [1, 2, 3, 4, 5, 6]],
    [2, [1, 2, 3, 4, 5, 6], [1, 3, 5, 2, 4, 6]],
    [4, [1, 2, 3, 4, 5, 6, 7, 8], [1, 5, 2, 6, 3, 7, 4, 8]],
    [8, [1, 2, 3, 4, 5, 6, 7, 8, 9, 10, 11, 12, 13, 14, 15, 16], [1, 9, 2, 10, 3, 11, 4, 12, 5, 13, 6, 14, 7, 15, 8, 16]],
  ])('with width %i writes byte b of element i at b·N + i', (width, input, shuffled) => {
    expect(Array.from(shuffleBytes(Uint8Array.from(input), width))).toEqual(shuffled);
    expect(Array.from(unshuffleBytes(Uint8Array.from(shuffled), width))).toEqual(input);
  });

  it.each([1, 2, 4, 8])('with width %i is undone by unshuffle for every element count 0..64 and 4096', (width) => {
    for (const count of [...Array.from({ length: 65 }, (_, n) => n), 4096]) {
      const bytes = seededBytes(count * width, count * 31 + width);
      expect(unshuffleBytes(shuffleBytes(bytes, width), width), `${count} elements`).toEqual(bytes);
    }
  });

  it('keeps a tail shorter than one element where it was', () => {
    const bytes = Uint8Array.of(1, 2, 3, 4, 5, 6, 7);
    expect(Array.from(shuffleBytes(bytes, 2))).toEqual([1, 3, 5, 2, 4, 6, 7]);
    expect(unshuffleBytes(shuffleBytes(bytes, 4), 4)).toEqual(bytes);
  });

  it('returns a copy, never the input itself', () => {
    const bytes = Uint8Array.of(9, 8, 7);
    expect(shuffleBytes(bytes, 1)).not.toBe(bytes);
    expect(unshuffleBytes(bytes, 1)).not.toBe(bytes);
  });
});

describe('column codec (SPEC.md §3, array maps)', () => {
  /** A smooth column (as state and Q values are) with every special value mixed in. */
  function smoothColumnWithSpecials(): Float32Array {
    const column = new Float32Array(2048);
    for (let i = 0; i < column.length; i++) column[i] = Math.fround(1 + i / 4096);
    // Written as bits: assigning a JS number would quiet the signalling NaN before the codec saw it.
    const bits = new Uint32Array(column.buffer);
    SPECIAL_F32_BITS.forEach((b, k) => (bits[100 + k * 97] = b));
    return column;
  }

  it('reads a smooth f32 column stored with xor-shuffle-deflate (version-1 files) bit for bit, specials included', () => {
    const column = smoothColumnWithSpecials();
    const wire = xorShuffleDeflateBySpec('f32', [column.length], bytesOf(column));
    expect(wire.data.length).toBeLessThan(column.byteLength / 2);
    const decoded = decodeArray(wire, 'column', 1 << 20);
    expect(decoded).toBeInstanceOf(Float32Array);
    expect(hexBits(decoded as Float32Array)).toEqual(hexBits(column));
    SPECIAL_F32_BITS.forEach((bits, k) => expect(hexBits(decoded as Float32Array)[100 + k * 97]).toBe(bits.toString(16).padStart(8, '0')));
  });

  it.each([
    ['f32 rows of a state column', 'f32', [512, 4], () => bytesOf(Float32Array.from({ length: 2048 }, (_, i) => Math.fround(Math.sin(i / 300) + (i % 4)))) ],
    ['a one-dimensional f32 column', 'f32', [2048], () => bytesOf(smoothColumnWithSpecials())],
    ['f64 values, XORed as pairs of u32 words', 'f64', [300, 2], () => bytesOf(Float64Array.from({ length: 600 }, (_, i) => 1e6 + Math.floor(i / 2) * 0.5))],
    ['u16 action indices', 'u16', [1000], () => bytesOf(Uint16Array.from({ length: 1000 }, (_, i) => 300 + (i % 3)))],
    ['u8 flags', 'u8', [1000], () => Uint8Array.from({ length: 1000 }, (_, i) => (i % 50 === 49 ? 1 : 4))],
  ])('reads %s stored as SPEC.md §3 says (XOR with the row before, shuffle, raw deflate)', (_, dtype, shape, makeRaw) => {
    const raw = makeRaw();
    const wire = xorShuffleDeflateBySpec(dtype, shape, raw);
    expect(decodeArrayMapBySpec(wire)).toEqual(raw);
    expect(bytesOf(decodeArray(wire, 'column', 1 << 20))).toEqual(raw);
  });

  it('reads plain shuffle-deflate (without XOR), which SPEC.md §3 lets any writer use', () => {
    const column = smoothColumnWithSpecials();
    const wire = shuffleDeflateBySpec('f32', [1024, 2], bytesOf(column));
    expect(hexBits(decodeArray(wire, 'column', 1 << 20) as Float32Array)).toEqual(hexBits(column));
    const flags = Uint8Array.from({ length: 100 }, (_, i) => i % 8);
    expect(decodeArray(shuffleDeflateBySpec('u8', [100], flags), 'flags', 1 << 20)).toEqual(flags);
  });

  it.each([
    ['f64 with NaN payloads and −0', Float64Array.of(1, -0, NaN, Infinity, -Infinity, 5e-324, ...new Array(500).fill(2.5))],
    ['u16', Uint16Array.from({ length: 1000 }, (_, i) => i % 7)],
    ['u32', Uint32Array.from({ length: 1000 }, (_, i) => 70000 + (i % 3))],
    ['i32', Int32Array.from({ length: 1000 }, (_, i) => -i)],
    ['u8', Uint8Array.from({ length: 1000 }, (_, i) => i % 5)],
  ])('reads a %s column stored with xor-shuffle-deflate exactly', (_, column) => {
    // Give the f64 NaN at index 2 a payload in its low word, written as bits.
    if (column instanceof Float64Array) new Uint32Array(column.buffer)[4] = 0x00000001;
    const dtype = { Float64Array: 'f64', Uint16Array: 'u16', Uint32Array: 'u32', Int32Array: 'i32', Uint8Array: 'u8' }[column.constructor.name]!;
    const decoded = decodeArray(xorShuffleDeflateBySpec(dtype, [column.length], bytesOf(column)), 'column', 1 << 20);
    expect(decoded.constructor).toBe(column.constructor);
    expect(bytesOf(decoded)).toEqual(bytesOf(column));
  });

  it('writes every array raw: dtype, shape and the little-endian bytes', () => {
    const column = smoothColumnWithSpecials();
    const wire = encodeArray(column, [1024, 2]);
    expect(wire).toEqual({ dtype: 'f32', shape: [1024, 2], data: bytesOf(column) });
    expect(hexBits(decodeArray(wire, 'column', 1 << 20) as Float32Array)).toEqual(hexBits(column));
  });

  it('decodes into an aligned array even when the data sits at an odd offset', () => {
    const column = Float32Array.of(1.5, -2, 3);
    const backing = new Uint8Array(13);
    backing.set(bytesOf(column), 1);
    const decoded = decodeArray({ dtype: 'f32', shape: [3], data: backing.subarray(1) }, 'column', 1 << 20);
    expect(Array.from(decoded)).toEqual([1.5, -2, 3]);
  });

  it.each([
    ['a value that is not an array map', { dtype: 'f32', shape: [1] }, /^state: expected \{dtype, shape, data\}$/],
    ['an unknown dtype', { dtype: 'f16', shape: [1], data: new Uint8Array(2) }, /^state: expected \{dtype, shape, data\}$/],
    ['a negative shape', { dtype: 'f32', shape: [-1], data: new Uint8Array(0) }, /^state: shape \[-1\] is not a list of counts$/],
    ['data shorter than the shape', { dtype: 'f32', shape: [2, 2], data: new Uint8Array(12) }, /^state: holds 12 bytes, shape \[2,2\] of f32 needs 16$/],
    ['an unknown codec', { dtype: 'f32', shape: [1], data: new Uint8Array(4), codec: 'zstd' }, /^state: unknown codec "zstd" \(expected "xor-shuffle-deflate", "shuffle-deflate" or none\)$/],
    ['a damaged deflate stream', { dtype: 'f32', shape: [4], data: Uint8Array.of(0xff, 0xff, 0xff), codec: 'shuffle-deflate' }, /^state: deflate stream is damaged/],
    ['a shape too large to inflate', { dtype: 'f32', shape: [2 ** 40], data: new Uint8Array(4), codec: 'shuffle-deflate' }, /^state: shape \[1099511627776\] needs 4398046511104 bytes, more than allowed \(4096\)$/],
  ])('refuses %s, naming the column', (_, wire, message) => {
    expect(() => decodeArray(wire, 'state', 4096)).toThrow(message);
  });
});

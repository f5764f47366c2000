/**
 * Arrays inside record payloads: raw little-endian bytes with a dtype and a shape, optionally byte
 * shuffled and deflated. Never lists of numbers: a list costs 5–9 bytes per float and a parse per
 * element, raw bytes cost 4 and a copy.
 */
import { inflateRaw } from './deflate.ts';
import { unshuffleBytes } from './shuffle.ts';

export type DType = 'u8' | 'u16' | 'u32' | 'i32' | 'f32' | 'f64';
export type TypedArray = Uint8Array | Uint16Array | Uint32Array | Int32Array | Float32Array | Float64Array;

export const DTYPE_SIZE: Record<DType, number> = { u8: 1, u16: 2, u32: 4, i32: 4, f32: 4, f64: 8 };
const CTORS = {
  u8: Uint8Array,
  u16: Uint16Array,
  u32: Uint32Array,
  i32: Int32Array,
  f32: Float32Array,
  f64: Float64Array,
} as const;

export const CODEC_SHUFFLE_DEFLATE = 'shuffle-deflate';
export const CODEC_XOR_SHUFFLE_DEFLATE = 'xor-shuffle-deflate';
type Codec = typeof CODEC_SHUFFLE_DEFLATE | typeof CODEC_XOR_SHUFFLE_DEFLATE;

/** The wire form of one array (a MessagePack map). */
export interface WireArray {
  dtype: DType;
  shape: number[];
  data: Uint8Array;
  codec?: Codec;
}

if (new Uint8Array(new Uint16Array([1]).buffer)[0] !== 1) {
  throw new Error('episcope needs a little-endian machine: step files store arrays as little-endian bytes');
}

export function dtypeOf(a: TypedArray): DType {
  if (a instanceof Float32Array) return 'f32';
  if (a instanceof Float64Array) return 'f64';
  if (a instanceof Uint32Array) return 'u32';
  if (a instanceof Int32Array) return 'i32';
  if (a instanceof Uint16Array) return 'u16';
  return 'u8';
}

export function bytesOf(a: TypedArray): Uint8Array {
  return new Uint8Array(a.buffer, a.byteOffset, a.byteLength);
}

/** Elements between one row's element and the same element of the next row: the product of shape[1:]. */
function rowStride(shape: number[]): number {
  let stride = 1;
  for (let i = 1; i < shape.length; i++) stride *= shape[i];
  return Math.max(stride, 1);
}

/**
 * Undo `xor-shuffle-deflate`'s XOR: from the second row on, in increasing order, every element's
 * bits are XORed with those of the element one row earlier. Lossless for every bit pattern.
 */
function unXorRows(bytes: Uint8Array, width: number, stride: number): void {
  const words = width === 8 ? 2 : 1;
  const view =
    width === 1 ? bytes : width === 2 ? new Uint16Array(bytes.buffer, bytes.byteOffset, bytes.length / 2) : new Uint32Array(bytes.buffer, bytes.byteOffset, bytes.length / 4);
  const step = stride * words;
  for (let i = step; i < view.length; i++) view[i] ^= view[i - step];
}

/**
 * An array as stored: raw little-endian bytes. Compressed step data is written as packed blocks
 * (packed-block.ts); the column codecs below are read for files of version 1 and other writers.
 */
export function encodeArray(a: TypedArray, shape: number[]): WireArray {
  return { dtype: dtypeOf(a), shape, data: bytesOf(a) };
}

/**
 * Decode a wire array into an aligned typed array (a view of the payload when its bytes are aligned). Throws a plain Error with a short reason;
 * the caller knows the file and offset and wraps it.
 */
export function decodeArray(w: unknown, what: string, maxBytes: number): TypedArray {
  if (!isWireArray(w)) throw new Error(`${what}: expected {dtype, shape, data}`);
  const size = DTYPE_SIZE[w.dtype];
  let count = 1;
  for (const d of w.shape) {
    if (!Number.isInteger(d) || d < 0) throw new Error(`${what}: shape ${JSON.stringify(w.shape)} is not a list of counts`);
    count *= d;
  }
  const want = count * size;
  let raw = w.data;
  if (w.codec === CODEC_SHUFFLE_DEFLATE || w.codec === CODEC_XOR_SHUFFLE_DEFLATE) {
    // The inflated size is known from the shape; refuse shapes that would exceed what a file could hold.
    if (want > maxBytes) throw new Error(`${what}: shape ${JSON.stringify(w.shape)} needs ${want} bytes, more than allowed (${maxBytes})`);
    let inflated: Uint8Array;
    try {
      inflated = inflateRaw(raw, want);
    } catch (e) {
      throw new Error(`${what}: deflate stream is damaged (${(e as Error).message})`);
    }
    if (inflated.length !== want) throw new Error(`${what}: inflates to ${inflated.length} bytes, shape needs ${want}`);
    raw = unshuffleBytes(inflated, size);
    if (w.codec === CODEC_XOR_SHUFFLE_DEFLATE) unXorRows(raw, size, rowStride(w.shape));
  } else if (w.codec !== undefined) {
    throw new Error(`${what}: unknown codec ${JSON.stringify(w.codec)} (expected "${CODEC_XOR_SHUFFLE_DEFLATE}", "${CODEC_SHUFFLE_DEFLATE}" or none)`);
  } else if (raw.length !== want) {
    throw new Error(`${what}: holds ${raw.length} bytes, shape ${JSON.stringify(w.shape)} of ${w.dtype} needs ${want}`);
  }
  // Bytes that happen to sit on an element boundary are viewed where they lie; others are copied
  // to an aligned array. Either way the result is the caller's to read, not to write.
  if (raw.byteOffset % size === 0) return new CTORS[w.dtype](raw.buffer as ArrayBuffer, raw.byteOffset, count);
  const out = new CTORS[w.dtype](count);
  new Uint8Array(out.buffer).set(raw);
  return out;
}

function isWireArray(w: unknown): w is WireArray {
  if (typeof w !== 'object' || w === null) return false;
  const o = w as Record<string, unknown>;
  return (
    typeof o.dtype === 'string' &&
    Object.prototype.hasOwnProperty.call(DTYPE_SIZE, o.dtype) &&
    Array.isArray(o.shape) &&
    o.data instanceof Uint8Array
  );
}

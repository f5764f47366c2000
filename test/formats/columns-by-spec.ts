/**
 * Array maps (SPEC.md §3) decoded from the SPEC's words alone, with node:zlib's raw inflate and
 * hand-written un-shuffle and un-XOR, so that tests check the codec against the SPEC rather than
 * against itself.
 */
import { deflateRawSync, inflateRawSync } from 'node:zlib';

export interface SpecArrayMap {
  dtype: string;
  shape: number[];
  data: Uint8Array;
  codec?: string;
}

export const DTYPE_WIDTH: Record<string, number> = { u8: 1, u16: 2, u32: 4, i32: 4, f32: 4, f64: 8 };

const product = (xs: number[]) => xs.reduce((a, b) => a * b, 1);

/** The raw little-endian bytes of the elements an array map holds. */
export function decodeArrayMapBySpec(map: SpecArrayMap): Uint8Array {
  const width = DTYPE_WIDTH[map.dtype];
  const n = product(map.shape);
  if (map.codec === undefined) return map.data;
  if (map.codec !== 'shuffle-deflate' && map.codec !== 'xor-shuffle-deflate') throw new Error(`codec ${map.codec} is not in SPEC.md §3`);
  const shuffled = inflateRawSync(map.data);
  if (shuffled.length !== n * width) throw new Error(`inflates to ${shuffled.length} bytes, the shape needs ${n * width}`);
  // Unshuffle: output byte b·N + i came from input byte i·w + b.
  const raw = new Uint8Array(n * width);
  for (let i = 0; i < n; i++) for (let b = 0; b < width; b++) raw[i * width + b] = shuffled[b * n + i];
  if (map.codec === 'xor-shuffle-deflate') {
    // Undo, from the second row on in increasing order: element i ^= element i − stride, taking
    // elements as unsigned integers of their width and an f64 as two u32 words.
    const stride = map.shape.length > 1 ? product(map.shape.slice(1)) : 1;
    const wordWidth = Math.min(width, 4);
    const view = new DataView(raw.buffer);
    const words = (n * width) / wordWidth;
    const step = stride * (width / wordWidth);
    const get = (k: number) => (wordWidth === 1 ? view.getUint8(k) : wordWidth === 2 ? view.getUint16(k * 2, true) : view.getUint32(k * 4, true));
    const set = (k: number, v: number) => (wordWidth === 1 ? view.setUint8(k, v) : wordWidth === 2 ? view.setUint16(k * 2, v, true) : view.setUint32(k * 4, v >>> 0, true));
    for (let k = step; k < words; k++) set(k, get(k) ^ get(k - step));
  }
  return raw;
}

/** An array map encoded with plain `shuffle-deflate` (no XOR), as another writer may store it. */
export function shuffleDeflateBySpec(dtype: string, shape: number[], raw: Uint8Array): SpecArrayMap {
  const width = DTYPE_WIDTH[dtype];
  const n = raw.length / width;
  const shuffled = new Uint8Array(raw.length);
  for (let i = 0; i < n; i++) for (let b = 0; b < width; b++) shuffled[b * n + i] = raw[i * width + b];
  return { dtype, shape, data: new Uint8Array(deflateRawSync(shuffled)), codec: 'shuffle-deflate' };
}

/**
 * An array map encoded with `xor-shuffle-deflate` from the SPEC's words (§3), as version-1 files
 * of earlier episcope builds hold it: XOR each element with the one a row (stride) earlier, taking
 * elements as unsigned integers of their width and an f64 as two u32 words; shuffle; raw deflate.
 */
export function xorShuffleDeflateBySpec(dtype: string, shape: number[], raw: Uint8Array): SpecArrayMap {
  const width = DTYPE_WIDTH[dtype];
  const stride = shape.length > 1 ? product(shape.slice(1)) : 1;
  const wordWidth = Math.min(width, 4);
  const xored = raw.slice();
  const view = new DataView(xored.buffer);
  const words = raw.length / wordWidth;
  const step = stride * (width / wordWidth);
  const get = (k: number) => (wordWidth === 1 ? view.getUint8(k) : wordWidth === 2 ? view.getUint16(k * 2, true) : view.getUint32(k * 4, true));
  const set = (k: number, v: number) => (wordWidth === 1 ? view.setUint8(k, v) : wordWidth === 2 ? view.setUint16(k * 2, v, true) : view.setUint32(k * 4, v >>> 0, true));
  // From the last element down, so every XOR reads an element not yet changed.
  for (let k = words - 1; k >= step; k--) set(k, get(k) ^ get(k - step));
  const { data } = shuffleDeflateBySpec(dtype, shape, xored);
  return { dtype, shape, data, codec: 'xor-shuffle-deflate' };
}

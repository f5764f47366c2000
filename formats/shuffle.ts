/**
 * Byte shuffle: for an array of `width`-byte elements, write all first bytes, then all second
 * bytes, and so on. Neighbouring floats share sign and exponent bytes, so the shuffled stream
 * has long similar runs that deflate compresses about twice as well as the plain bytes.
 */

export function shuffleBytes(src: Uint8Array, width: number): Uint8Array {
  if (width <= 1) return src.slice();
  const count = Math.floor(src.length / width);
  const out = new Uint8Array(src.length);
  for (let b = 0; b < width; b++) {
    const base = b * count;
    for (let i = 0; i < count; i++) out[base + i] = src[i * width + b];
  }
  // A tail shorter than one element cannot occur for typed-array columns; keep it verbatim anyway.
  out.set(src.subarray(count * width), count * width);
  return out;
}

export function unshuffleBytes(src: Uint8Array, width: number): Uint8Array {
  if (width <= 1) return src.slice();
  const count = Math.floor(src.length / width);
  const out = new Uint8Array(src.length);
  for (let b = 0; b < width; b++) {
    const base = b * count;
    for (let i = 0; i < count; i++) out[i * width + b] = src[base + i];
  }
  out.set(src.subarray(count * width), count * width);
  return out;
}

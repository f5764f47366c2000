/**
 * Raw inflate (RFC 1951) for the deflated columns of version-1 files. Node's zlib is about 3×
 * fflate, so it is used where it exists; in the browser fflate does the same job.
 */
import { inflateSync } from 'fflate';

interface NativeZlib {
  inflateRawSync(data: Uint8Array, options: { maxOutputLength?: number }): Uint8Array;
}

const zlib = (() => {
  const proc = (globalThis as { process?: { getBuiltinModule?: (id: string) => unknown } }).process;
  const z = proc?.getBuiltinModule?.('node:zlib') as NativeZlib | undefined;
  return typeof z?.inflateRawSync === 'function' ? z : null;
})();

/** Inflate to exactly `size` bytes at most; a stream that would exceed it is an error, not an allocation. */
export function inflateRaw(data: Uint8Array, size: number): Uint8Array {
  if (zlib) return zlib.inflateRawSync(data, { maxOutputLength: Math.max(size, 1) });
  // One byte of room past `size`: a stream that fills it is longer than the shape allows.
  const out = inflateSync(data, { out: new Uint8Array(size + 1) });
  if (out.length > size) throw new Error(`inflates to more than the ${size} bytes its shape allows`);
  return out;
}

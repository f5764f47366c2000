/**
 * CRC-32/ISO-HDLC (reflected polynomial 0xEDB88320, init and xor-out 0xFFFFFFFF): the CRC in zlib,
 * so a Python writer gets the same value from `zlib.crc32`. Slicing-by-8 because the reader checks
 * every record it opens, and this runs in the browser where there is no native zlib.
 */

const TABLES = (() => {
  const t = new Uint32Array(8 * 256);
  for (let n = 0; n < 256; n++) {
    let c = n;
    for (let k = 0; k < 8; k++) c = c & 1 ? 0xedb88320 ^ (c >>> 1) : c >>> 1;
    t[n] = c >>> 0;
  }
  for (let n = 0; n < 256; n++) {
    let c = t[n];
    for (let s = 1; s < 8; s++) {
      c = t[c & 0xff] ^ (c >>> 8);
      t[s * 256 + n] = c >>> 0;
    }
  }
  return t;
})();

type NativeCrc = (data: Uint8Array, value?: number) => number;

/**
 * Node ≥ 20.15 has zlib's own CRC-32 (about 4× this file's); browsers do not, and there the
 * slicing-by-8 code below serves. Both compute the same function.
 */
const native: NativeCrc | null = (() => {
  const proc = (globalThis as { process?: { getBuiltinModule?: (id: string) => unknown } }).process;
  const zlib = proc?.getBuiltinModule?.('node:zlib') as { crc32?: NativeCrc } | undefined;
  return typeof zlib?.crc32 === 'function' ? zlib.crc32 : null;
})();

/** Continue a CRC over `bytes`; start with `crc = 0`. Returns an unsigned 32-bit value. */
export function crc32(bytes: Uint8Array, crc = 0): number {
  if (native && bytes.length >= 64) return native(bytes, crc) >>> 0;
  return crc32Portable(bytes, crc);
}

/** The table-driven CRC, exported so tests can check it against the native one. */
export function crc32Portable(bytes: Uint8Array, crc = 0): number {
  const t = TABLES;
  let c = ~crc >>> 0;
  let i = 0;
  const n = bytes.length;
  const end8 = n - (n % 8);
  while (i < end8) {
    const lo = (bytes[i] | (bytes[i + 1] << 8) | (bytes[i + 2] << 16) | (bytes[i + 3] << 24)) ^ c;
    const hi = bytes[i + 4] | (bytes[i + 5] << 8) | (bytes[i + 6] << 16) | (bytes[i + 7] << 24);
    c =
      t[1792 + (lo & 0xff)] ^
      t[1536 + ((lo >>> 8) & 0xff)] ^
      t[1280 + ((lo >>> 16) & 0xff)] ^
      t[1024 + (lo >>> 24)] ^
      t[768 + (hi & 0xff)] ^
      t[512 + ((hi >>> 8) & 0xff)] ^
      t[256 + ((hi >>> 16) & 0xff)] ^
      t[hi >>> 24];
    i += 8;
  }
  while (i < n) c = t[(c ^ bytes[i++]) & 0xff] ^ (c >>> 8);
  return ~c >>> 0;
}

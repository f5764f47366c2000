import { crc32 as zlibCrc32 } from 'node:zlib';
import { describe, expect, it } from 'vitest';
import { crc32 as crc32Exported, crc32Portable } from '../../formats/crc32.ts';
import { seededBytes } from './seeded-bytes.ts';

const ascii = (s: string) => new TextEncoder().encode(s);

// `crc32` hands buffers of 64 bytes or more to node:zlib when it exists; `crc32Portable` is the
// table-driven code the browser runs. Both must be the same function at every length.
describe.each([
  ['crc32', crc32Exported],
  ['crc32Portable', crc32Portable],
])('%s (CRC-32/ISO-HDLC)', (_, crc32) => {
  it('gives the catalogue check value 0xCBF43926 for ASCII "123456789"', () => {
    // RevEng CRC catalogue (Greg Cook), entry CRC-32/ISO-HDLC: check = 0xCBF43926
    expect(crc32(ascii('123456789'))).toBe(0xcbf43926);
  });

  it.each([
    ['no bytes', '', 0x00000000],
    ['a single "a"', 'a', 0xe8b7be43],
    ['"abc"', 'abc', 0x352441c2],
  ])('gives the same value as zlib for %s', (__, text, expected) => {
    // Expected values are zlib's own (node:zlib crc32), checked here rather than remembered.
    expect(zlibCrc32(ascii(text))).toBe(expected);
    expect(crc32(ascii(text))).toBe(expected);
  });

  const lengths = [...Array.from({ length: 101 }, (_, n) => n), 4095, 65536];

  it('equals node:zlib crc32 on random buffers of every length 0..100, 4095 and 65536', () => {
    for (const length of lengths) {
      const bytes = seededBytes(length, 1000 + length);
      expect(crc32(bytes), `length ${length}`).toBe(zlibCrc32(bytes));
    }
  });

  it('equals node:zlib crc32 on views that start at an odd byte offset', () => {
    const backing = seededBytes(4096 + 3, 7);
    for (const [start, end] of [[1, 4], [3, 4099], [5, 70], [2, 2]]) {
      const view = backing.subarray(start, end);
      expect(crc32(view), `bytes ${start}..${end}`).toBe(zlibCrc32(view));
    }
  });

  it('continues a CRC: crc32(b, crc32(a)) is the CRC of a ‖ b', () => {
    for (const length of lengths) {
      const whole = seededBytes(length, 5000 + length);
      for (const cut of new Set([0, Math.floor(length / 3), length])) {
        const a = whole.subarray(0, cut);
        const b = whole.subarray(cut);
        const continued = crc32(b, crc32(a));
        expect(continued, `length ${length} cut at ${cut}`).toBe(zlibCrc32(whole));
        expect(continued).toBe(zlibCrc32(b, zlibCrc32(a)));
      }
    }
  });

  it('returns an unsigned 32-bit value', () => {
    const values = lengths.map((n) => crc32(seededBytes(n, n)));
    for (const v of values) {
      expect(Number.isInteger(v) && v >= 0 && v <= 0xffffffff).toBe(true);
    }
    expect(values.some((v) => v >= 2 ** 31)).toBe(true);
  });
});

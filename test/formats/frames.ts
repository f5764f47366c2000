/**
 * Test helpers that read a step file's bytes without the codec: an independent walk over the
 * framing described in formats/frame.ts and SPEC.md §2 (8-byte magic, then records of
 * u32 LE length | u8 kind | payload | u32 LE CRC-32 of kind ‖ payload), with the CRC taken from
 * node:zlib rather than formats/crc32.ts. Also byte sources that police the reader's reads.
 */
import { crc32 as zlibCrc32 } from 'node:zlib';
import type { ByteSource } from '../../formats/source.ts';

export const MAGIC_TEXT = 'EPISCOPE';
export const FRAME_BYTES = 9;

export const KIND = {
  header: 1,
  stepBlock: 2,
  episodeEnd: 3,
  snapshot: 4,
  note: 5,
  index: 6,
  trailer: 7,
} as const;

export interface WalkedFrame {
  /** Position in the file, counting the header as record 0. */
  record: number;
  /** Offset of the frame's length field. */
  offset: number;
  kind: number;
  /** Payload length. */
  length: number;
  payload: Uint8Array;
  /** Offset just past the frame's CRC. */
  end: number;
  crcOk: boolean;
}

/** Every whole frame after the magic, in file order; stops at the first frame that does not fit. */
export function walkFrames(file: Uint8Array): WalkedFrame[] {
  const view = new DataView(file.buffer, file.byteOffset, file.byteLength);
  const frames: WalkedFrame[] = [];
  let offset = MAGIC_TEXT.length;
  while (offset + FRAME_BYTES <= file.length) {
    const length = view.getUint32(offset, true);
    const end = offset + FRAME_BYTES + length;
    if (end > file.length) break;
    const kind = file[offset + 4];
    const storedCrc = view.getUint32(offset + 5 + length, true);
    const crcOk = zlibCrc32(file.subarray(offset + 4, offset + 5 + length)) === storedCrc;
    frames.push({ record: frames.length, offset, kind, length, payload: file.subarray(offset + 5, offset + 5 + length), end, crcOk });
    offset = end;
  }
  return frames;
}

/** Frame a payload by hand (SPEC.md §2), for files the codec would never write. */
export function frameByHand(kind: number, payload: Uint8Array): Uint8Array {
  const out = new Uint8Array(FRAME_BYTES + payload.length);
  const view = new DataView(out.buffer);
  view.setUint32(0, payload.length, true);
  out[4] = kind;
  out.set(payload, 5);
  view.setUint32(5 + payload.length, zlibCrc32(out.subarray(4, 5 + payload.length)), true);
  return out;
}

export function concatBytes(...parts: Uint8Array[]): Uint8Array {
  const out = new Uint8Array(parts.reduce((n, p) => n + p.length, 0));
  let at = 0;
  for (const p of parts) {
    out.set(p, at);
    at += p.length;
  }
  return out;
}

export const magicBytes = (): Uint8Array => new TextEncoder().encode(MAGIC_TEXT);

/** A copy of `file` with the byte at `at` inverted. */
export function flipByte(file: Uint8Array, at: number): Uint8Array {
  const copy = file.slice();
  copy[at] ^= 0xff;
  return copy;
}

/**
 * A byte source that fails the test (with a plain Error, which no reader path may turn into a
 * StepFileError) if the reader asks for bytes outside the file, and that remembers the largest read.
 */
export function policedSource(bytes: Uint8Array): ByteSource & { largestRead: number } {
  const source = {
    size: bytes.length,
    largestRead: 0,
    read(offset: number, length: number): Uint8Array {
      if (!Number.isSafeInteger(offset) || !Number.isSafeInteger(length) || offset < 0 || length < 0 || offset + length > bytes.length) {
        throw new Error(`reader asked for ${length} bytes at ${offset} of a ${bytes.length}-byte file`);
      }
      source.largestRead = Math.max(source.largestRead, length);
      return bytes.subarray(offset, offset + length);
    },
  };
  return source;
}

/**
 * Framing. A step file is the 8-byte magic "EPISCOPE" followed by records, each
 *   u32 payloadLength | u8 kind | payload | u32 CRC-32(kind ‖ payload)
 * little-endian, so a record is whole exactly when its CRC checks out.
 */
import { crc32 } from './crc32.ts';

export const MAGIC = new Uint8Array([0x45, 0x50, 0x49, 0x53, 0x43, 0x4f, 0x50, 0x45]); // "EPISCOPE"
export const FRAME_OVERHEAD = 9;

export const enum Kind {
  Header = 1,
  StepBlock = 2,
  EpisodeEnd = 3,
  Snapshot = 4,
  Note = 5,
  Index = 6,
  Trailer = 7,
}

export const KIND_NAMES: Record<number, string> = {
  1: 'header',
  2: 'step block',
  3: 'episode end',
  4: 'snapshot',
  5: 'note',
  6: 'index',
  7: 'trailer',
};

/** The trailer is a record with an 8-byte payload: the offset of the index record (u64). */
export const TRAILER_PAYLOAD = 8;
export const TRAILER_SIZE = FRAME_OVERHEAD + TRAILER_PAYLOAD;

export function frame(kind: Kind, payload: Uint8Array): Uint8Array {
  const out = new Uint8Array(FRAME_OVERHEAD + payload.length);
  const dv = new DataView(out.buffer);
  dv.setUint32(0, payload.length, true);
  out[4] = kind;
  out.set(payload, 5);
  dv.setUint32(5 + payload.length, crc32(out.subarray(4, 5 + payload.length)), true);
  return out;
}

export function trailerPayload(indexOffset: number): Uint8Array {
  const p = new Uint8Array(TRAILER_PAYLOAD);
  const dv = new DataView(p.buffer);
  dv.setUint32(0, indexOffset % 2 ** 32, true);
  dv.setUint32(4, Math.floor(indexOffset / 2 ** 32), true);
  return p;
}

export function readU64(bytes: Uint8Array, at: number): number {
  const dv = new DataView(bytes.buffer, bytes.byteOffset, bytes.byteLength);
  return dv.getUint32(at, true) + dv.getUint32(at + 4, true) * 2 ** 32;
}

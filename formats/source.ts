/** Where a reader's bytes come from: a whole file in memory (browser, tests) or a file handle (Node). */
export interface ByteSource {
  readonly size: number;
  /** Exactly `length` bytes from `offset`; the caller has checked the range lies within `size`. */
  read(offset: number, length: number): Uint8Array;
  /** Release what the source holds (a file handle); reads after this fail. */
  close?(): void;
}

export function bytesSource(bytes: Uint8Array): ByteSource {
  return { size: bytes.length, read: (offset, length) => bytes.subarray(offset, offset + length) };
}

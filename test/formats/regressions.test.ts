/** Bugs found once, kept from coming back. */
import { encode } from '@msgpack/msgpack';
import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { openStepFile } from '../../formats/reader.ts';
import { decodeNote } from '../../formats/records.ts';
import { bytesSource } from '../../formats/source.ts';

describe('regressions', () => {
  it('opens a closed file given as a Node Buffer through its index (a Buffer slice is a view of a larger pool)', () => {
    const f = openStepFile(bytesSource(readFileSync(join(import.meta.dirname, '..', '..', 'samples', 'rover.steps'))), 'rover.steps');
    expect(f.recovery.indexed).toBe(true);
    expect(f.recovery.indexProblem).toBeNull();
  });

  it('refuses a payload map with a "__proto__" key, and nothing reaches a prototype', () => {
    // The key comes first, so the fields after it are lost whatever the decoder does with it.
    const payload = encode(new Map<string, unknown>([['__proto__', { polluted: true }], ['episode', 0], ['from', 0], ['to', 1], ['text', 'x']]));
    expect(() => decodeNote(payload)).toThrow();
    expect(({} as Record<string, unknown>).polluted).toBeUndefined();
  });
});

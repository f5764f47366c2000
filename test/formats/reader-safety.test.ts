/**
 * Files the reader must refuse, or open in part, without trusting what their bytes claim:
 * lengths past the end of the file, other kinds of file, a version it does not know.
 */
import { encode } from '@msgpack/msgpack';
import { describe, expect, it } from 'vitest';
import { StepFileError } from '../../formats/errors.ts';
import { openStepFile } from '../../formats/reader.ts';
import { encodeHeader } from '../../formats/records.ts';
import { FORMAT_VERSION, type Header } from '../../formats/types.ts';
import { StepFileWriter } from '../../formats/writer.ts';
import { MemorySink } from '../../src/record/memory-sink.ts';
import { KIND, concatBytes, frameByHand, magicBytes, policedSource, walkFrames } from './frames.ts';
import { TROLLEY_HEADER, openBytes, recordSample } from './sample-recording.ts';

function openError(bytes: Uint8Array): StepFileError {
  try {
    openStepFile(policedSource(bytes), 'odd.steps');
  } catch (e) {
    expect(e).toBeInstanceOf(StepFileError);
    return e as StepFileError;
  }
  throw new Error('expected the file to be refused');
}

const u32le = (n: number) => {
  const b = new Uint8Array(4);
  new DataView(b.buffer).setUint32(0, n, true);
  return b;
};

/** The header as SPEC.md §4 describes it, encoded by an independent MessagePack encoder. */
const specHeader = (version: number) => ({
  format: 'episcope step file',
  version,
  stateDims: [{ name: 'position', unit: 'm' }],
  actions: ['reverse', 'forward'],
  gamma: 0.9,
  system: { kind: 'mountain-car', title: 'crater rover', map: { position: 0 }, params: {} },
  extras: [],
  run: {},
  createdAt: '',
});

describe('length fields that claim more than the file holds', () => {
  it('reports a header whose length field claims 4 GB as cut short, without allocating for it', () => {
    const bytes = concatBytes(magicBytes(), u32le(0xffffffff), Uint8Array.of(KIND.header), new Uint8Array(64));
    const source = policedSource(bytes);
    const before = process.memoryUsage().arrayBuffers;
    let error: unknown;
    try {
      openStepFile(source, 'huge.steps');
    } catch (e) {
      error = e;
    }
    expect(error).toBeInstanceOf(StepFileError);
    expect(error).toMatchObject({ problem: 'cut-short', offset: 8 });
    expect(source.largestRead).toBeLessThanOrEqual(bytes.length);
    expect(process.memoryUsage().arrayBuffers - before).toBeLessThan(64 * 1024 * 1024);
  });

  it('keeps the whole records before a step block whose length field claims 4 GB', () => {
    const good = recordSample(false);
    const frames = walkFrames(good);
    const block = frames.find((f) => f.kind === KIND.stepBlock)!;
    const damaged = good.slice(0, frames.find((f) => f.kind === KIND.index)!.offset);
    damaged.set(u32le(0xfffffff0), block.offset);
    const source = policedSource(damaged);
    const file = openStepFile(source, 'huge.steps');
    expect(file.recovery.dropped).toEqual([
      {
        problem: 'cut-short',
        offset: block.offset,
        record: block.record,
        kind: 'step block',
        bytes: damaged.length - block.offset,
        detail: `step block record ${block.record} needs ${0xfffffff0 + 9} bytes, the file ends after ${damaged.length - block.offset} (a recorder stopped mid-write, or the length field is damaged)`,
      },
    ]);
    expect(file.snapshots).toHaveLength(2);
    expect(file.blocks).toHaveLength(0);
    expect(source.largestRead).toBeLessThanOrEqual(damaged.length);
  });

  it('falls back to the scan when the index record claims 4 GB, and recovers every step', () => {
    const good = recordSample(false);
    const index = walkFrames(good).find((f) => f.kind === KIND.index)!;
    const damaged = good.slice();
    damaged.set(u32le(0xffffffff), index.offset);
    const source = policedSource(damaged);
    const file = openStepFile(source, 'huge.steps');
    expect(file.recovery.indexed).toBe(false);
    expect(file.recovery.indexProblem).toBe(`the index record at byte ${index.offset} does not end where the trailer begins`);
    expect(file.recovery.dropped).toMatchObject([{ problem: 'cut-short', offset: index.offset, kind: 'index' }]);
    expect(file.totalSteps).toBe(openBytes(good).totalSteps);
    expect(source.largestRead).toBeLessThanOrEqual(damaged.length);
  });

  it('refuses, as corrupt, a block whose count of steps is larger than its columns', () => {
    const good = recordSample(false);
    const frames = walkFrames(good);
    const unclosed = good.subarray(0, frames.find((f) => f.kind === KIND.index)!.offset);
    const file = openBytes(unclosed);
    expect(file.readBlock(0).n).toBe(3);
    // A well-framed block (good CRC) whose n says 4 while its columns hold 3 rows.
    const blockFrame = frames.find((f) => f.kind === KIND.stepBlock)!;
    const payload = blockFrame.payload.slice();
    const nKey = findMsgpackKey(payload, 'n');
    payload[nKey + 2] = 4; // the positive fixint right after the key "n"
    const rebuilt = concatBytes(unclosed.subarray(0, blockFrame.offset), frameByHand(KIND.stepBlock, payload), unclosed.subarray(blockFrame.end));
    const damaged = openBytes(rebuilt);
    expect(() => damaged.readBlock(0)).toThrow(expect.objectContaining({ problem: 'corrupt', offset: blockFrame.offset }));
    expect(() => damaged.readBlock(0)).toThrow(/step block record: step block\.state: holds 6 values, expected 8$/);
  });

  it('refuses, as corrupt and without sizing arrays from the claim, an episode whose block claims 2^40 steps', () => {
    // A well-framed block (good CRC) whose n claims 2^40 rows over empty columns.
    const header: Header = { version: FORMAT_VERSION, ...TROLLEY_HEADER };
    const sink = new MemorySink();
    const writer = new StepFileWriter(sink, header, false);
    writer.writeBlock({
      n: 2 ** 40,
      episode: 0,
      firstStep: 0,
      state: new Float32Array(0),
      action: new Uint8Array(0),
      reward: new Float32Array(0),
      flags: new Uint8Array(0),
      q: new Float32Array(0),
      epsilon: null,
      extras: {},
      weights: [[0, '', '']],
    });
    const file = openStepFile(policedSource(sink.bytes()), 'claims.steps');
    expect(file.episode(0).length).toBe(2 ** 40);
    let error: unknown;
    try {
      file.readEpisode(0);
    } catch (e) {
      error = e;
    }
    expect(error).toBeInstanceOf(StepFileError);
    expect(error).toMatchObject({ problem: 'corrupt', offset: walkFrames(sink.bytes())[1].offset });
    expect(() => file.readBlock(0)).toThrow(/step block\.state: holds 0 bytes, shape \[1099511627776,2\] of f32 needs 8796093022208$/);
  });
});

/** Offset of the MessagePack fixstr key `key` (0xa0 | length, then its bytes) in a payload. */
function findMsgpackKey(payload: Uint8Array, key: string): number {
  const wanted = [0xa0 | key.length, ...new TextEncoder().encode(key)];
  for (let i = 0; i + wanted.length <= payload.length; i++) {
    if (wanted.every((b, k) => payload[i + k] === b) && payload[i + wanted.length] < 0x80) return i;
  }
  throw new Error(`no key ${key}`);
}

describe('files that are not step files, or not this version', () => {
  it.each([
    ['a text file', 'hello world'],
    ['a short file that is not a prefix of the magic', 'EPIX'],
    ['a file that starts like the magic but is not it', 'EPISCOPF and then more'],
    ['a JSON file', '{"episodes": []}'],
  ])('refuses %s as not a step file', (_, text) => {
    const error = openError(new TextEncoder().encode(text));
    expect(error.problem).toBe('not-a-step-file');
    expect(error.offset).toBe(0);
    expect(error.message).toBe('odd.steps at byte 0: does not start with the step-file signature "EPISCOPE"');
  });

  it.each([0, 1, 7])('says a file of %i bytes that begins the magic was cut short', (length) => {
    const error = openError(magicBytes().subarray(0, length));
    expect(error.problem).toBe('cut-short');
    expect(error.message).toBe(`odd.steps at byte 0: the file holds only ${length} bytes, not even the 8-byte signature`);
  });

  it('opens a header written by an independent MessagePack encoder from the SPEC alone', () => {
    const file = openStepFile(policedSource(concatBytes(magicBytes(), frameByHand(KIND.header, encode(specHeader(1))))), 'by-hand.steps');
    const { format: _format, ...fields } = specHeader(1);
    expect(file.header).toEqual(fields);
    expect(file.episodes).toEqual([]);
  });

  it('reads a version-2 header: packed blocks may follow', () => {
    const file = openStepFile(policedSource(concatBytes(magicBytes(), frameByHand(KIND.header, encode(specHeader(2))))), 'v2.steps');
    expect(file.header.version).toBe(2);
  });

  it('refuses a header of a later version as unsupported, naming the versions it reads', () => {
    const later = FORMAT_VERSION + 1;
    const error = openError(concatBytes(magicBytes(), frameByHand(KIND.header, encode(specHeader(later)))));
    expect(error.problem).toBe('unsupported');
    expect(error.offset).toBe(8);
    expect(error.message).toBe(`odd.steps at byte 8: header record: header.version: this reader reads versions 1 to 2, the file is version ${later}`);
  });

  it('refuses a closed file with an index whose header is of a later version as unsupported', () => {
    const sink = new MemorySink();
    new StepFileWriter(sink, { version: 1, ...TROLLEY_HEADER } as Header, false).finish();
    const bytes = sink.bytes();
    const frames = walkFrames(bytes);
    expect(frames.map((f) => f.kind)).toEqual([KIND.header, KIND.index, KIND.trailer]);
    // The same header with a later version number is as long, so the index still points right.
    const later = frameByHand(KIND.header, encodeHeader({ version: FORMAT_VERSION + 1, ...TROLLEY_HEADER }));
    expect(later.length).toBe(frames[0].end - frames[0].offset);
    expect(openError(concatBytes(magicBytes(), later, bytes.subarray(frames[0].end)))).toMatchObject({ problem: 'unsupported', offset: 8 });
  });

  it('refuses a file whose first record is not a header as corrupt', () => {
    const note = frameByHand(KIND.note, encode({ episode: 0, from: 0, to: 0, text: 'hi' }));
    expect(openError(concatBytes(magicBytes(), note))).toMatchObject({ problem: 'corrupt', offset: 8, detail: 'the first record is a note, expected the header' });
  });

  it('refuses a header that breaks the SPEC, naming the field', () => {
    const bad = { ...specHeader(1), system: { kind: 'mountain-car', map: { position: 3 } } };
    expect(openError(concatBytes(magicBytes(), frameByHand(KIND.header, encode(bad))))).toMatchObject({
      problem: 'corrupt',
      detail: 'header record: header.system.map.position: expected a state index in 0..0, found 3',
    });
  });

  it('stops the scan at a record of unknown kind and says the rest cannot be framed', () => {
    const header = frameByHand(KIND.header, encodeHeader({ version: 1, ...TROLLEY_HEADER }));
    const odd = frameByHand(9, new Uint8Array(4));
    const file = openBytes(concatBytes(magicBytes(), header, odd, header));
    expect(file.recovery.dropped).toEqual([
      { problem: 'corrupt', offset: header.length + 8, record: 1, kind: null, bytes: odd.length + header.length, detail: 'record 1 has unknown kind 9 (expected 1–7); the rest of the file cannot be framed' },
    ]);
  });
});

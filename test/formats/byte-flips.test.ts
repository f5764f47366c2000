/**
 * Damage, as opposed to a file cut short: one byte flipped inside a record. Whatever record it
 * hits, the reader must say which record is corrupt (dropping it from a scan, or refusing to read
 * it through the index) and must never hand back data that differs from what was written.
 */
import { isDeepStrictEqual } from 'node:util';
import { describe, expect, it } from 'vitest';
import { StepFileError } from '../../formats/errors.ts';
import { openStepFile, type StepFile } from '../../formats/reader.ts';
import { KIND, flipByte, policedSource, walkFrames, type WalkedFrame } from './frames.ts';
import { openBytes, readEverything, recordSample } from './sample-recording.ts';

const KIND_NAME: Record<number, string> = { 1: 'header', 2: 'step block', 3: 'episode end', 4: 'snapshot', 5: 'note', 6: 'index', 7: 'trailer' };

interface Reports {
  /** Offsets of records reported corrupt, by the scan or by a read that threw. */
  corruptOffsets: Set<number>;
  /** Reads that returned something other than what the undamaged file returns. */
  wrongData: string[];
  /** Errors of any other kind or problem. */
  unexpected: string[];
}

/**
 * Open the damaged bytes and read everything they list, comparing each result with the same read
 * of the undamaged file. A read may throw a StepFileError; anything else is noted as unexpected.
 */
function openAndReadAll(damaged: Uint8Array, original: StepFile): Reports {
  const reports: Reports = { corruptOffsets: new Set(), wrongData: [], unexpected: [] };
  const attempt = (what: string, read: () => void) => {
    try {
      read();
    } catch (e) {
      if (e instanceof StepFileError && e.problem === 'corrupt' && e.offset !== null) reports.corruptOffsets.add(e.offset);
      else if (e instanceof StepFileError && e.problem === 'not-found' && what.startsWith('snapshot')) {
        // A snapshot stored without layers whose carrier was dropped: refused, not misread.
      } else reports.unexpected.push(`${what}: ${e instanceof StepFileError ? `${e.problem} ${e.message}` : String(e)}`);
    }
  };
  let file: StepFile | null = null;
  attempt('open', () => {
    file = openStepFile(policedSource(damaged), 'flipped.steps');
  });
  if (!file) return reports;
  const opened: StepFile = file;
  for (const d of opened.recovery.dropped) {
    if (d.problem === 'corrupt') reports.corruptOffsets.add(d.offset);
    else reports.unexpected.push(`dropped ${d.problem} at ${d.offset}`);
  }
  const same = (what: string, actual: unknown, expected: unknown) => {
    if (!isDeepStrictEqual(actual, expected)) reports.wrongData.push(what);
  };
  same('header', opened.header, original.header);
  opened.blocks.forEach((ref, i) => {
    const at = original.blocks.findIndex((b) => b.offset === ref.offset);
    attempt(`block ${i}`, () => same(`block ${i}`, opened.readBlock(i), original.readBlock(at)));
  });
  opened.snapshots.forEach((ref, i) => {
    const at = original.snapshots.find((s) => s.offset === ref.offset)!;
    attempt(`snapshot ${i}`, () => same(`snapshot ${i}`, opened.readSnapshot(ref), original.readSnapshot(at)));
  });
  for (const e of opened.episodes) {
    same(`end of episode ${e.episode}`, e.end === null || isDeepStrictEqual(e.end, original.episode(e.episode).end), true);
    attempt(`episode ${e.episode}`, () => {
      const steps = opened.readEpisode(e.episode);
      const full = original.readEpisode(e.episode);
      const D = 2;
      const A = 3;
      // Rows are compared by step index: a dropped block leaves a hole, never shifted rows.
      steps.step.forEach((t, row) => {
        same(`episode ${e.episode} step ${t} state`, steps.state.subarray(row * D, row * D + D), full.state.subarray(t * D, t * D + D));
        same(`episode ${e.episode} step ${t} q`, steps.q.subarray(row * A, row * A + A), full.q.subarray(t * A, t * A + A));
        same(`episode ${e.episode} step ${t} action/reward/flags`, [steps.action[row], steps.reward[row], steps.flags[row]], [full.action[t], full.reward[t], full.flags[t]]);
      });
    });
  }
  for (const n of opened.notes) same('note', original.notes.some((o) => isDeepStrictEqual(o, n)), true);
  return reports;
}

const middleOfPayload = (f: WalkedFrame) => f.offset + 5 + Math.floor(f.length / 2);

describe.each([
  ['a closed file (opened through its index)', false],
  ['a closed, compressed file', true],
])('one byte flipped in the middle of each record of %s', (_, compress) => {
  const bytes = recordSample(compress);
  const original = openBytes(bytes);
  const frames = walkFrames(bytes);

  it.each(frames.map((f) => [f.record, KIND_NAME[f.kind], f] as const))('record %i (%s) is reported corrupt at its offset, and nothing else is misread', (_, __, frame) => {
    const reports = openAndReadAll(flipByte(bytes, middleOfPayload(frame)), original);
    expect(reports.unexpected).toEqual([]);
    expect(reports.wrongData).toEqual([]);
    expect([...reports.corruptOffsets]).toEqual([frame.offset]);
  });

  it('reports a record dropped by the scan with its number, offset and kind', () => {
    const end = frames.find((f) => f.kind === KIND.episodeEnd)!;
    const file = openBytes(flipByte(bytes, middleOfPayload(end)));
    expect(file.recovery.indexed).toBe(false);
    expect(file.recovery.indexProblem).toBe(`the episode end record at byte ${end.offset} does not match the index or fails its CRC`);
    expect(file.recovery.dropped).toEqual([
      { problem: 'corrupt', offset: end.offset, record: end.record, kind: 'episode end', bytes: end.end - end.offset, detail: expect.stringMatching(/^episode end record \d+ fails its CRC \(stored 0x[0-9A-F]{8}, computed 0x[0-9A-F]{8}\)$/) },
    ]);
    expect(file.recovery.records).toBe(frames.length - 1);
    expect(file.episode(0).end).toBeNull();
    expect(file.episode(0).length).toBe(5);
  });

  it('refuses to read a damaged step block through the index, naming its offset', () => {
    const block = frames.find((f) => f.kind === KIND.stepBlock)!;
    const file = openBytes(flipByte(bytes, middleOfPayload(block)));
    expect(file.recovery.indexed).toBe(true);
    expect(() => file.readBlock(0)).toThrow(StepFileError);
    expect(() => file.readBlock(0)).toThrow(new RegExp(`^sample\\.steps at byte ${block.offset}: step block record fails its CRC \\(stored 0x[0-9A-F]{8}, computed 0x[0-9A-F]{8}\\)$`));
    expect(() => file.readEpisode(0)).toThrow(expect.objectContaining({ problem: 'corrupt', offset: block.offset }));
    expect(file.readBlock(1)).toEqual(original.readBlock(1));
  });

  it('refuses a file whose header is damaged, since nothing can be read without it', () => {
    const header = frames[0];
    expect(() => openBytes(flipByte(bytes, middleOfPayload(header)))).toThrow(
      expect.objectContaining({ name: 'StepFileError', problem: 'corrupt', offset: 8 }),
    );
  });

  it.each([
    ['the trailer', KIND.trailer, /^the trailer at byte \d+ fails its CRC$/],
    ['the index', KIND.index, /^the index record at byte \d+ fails its CRC$/],
  ])('falls back to the scan when %s is damaged, and still recovers every step', (_, kind, problem) => {
    const damagedFrame = frames.find((f) => f.kind === kind)!;
    const file = openBytes(flipByte(bytes, middleOfPayload(damagedFrame)));
    expect(file.recovery.indexed).toBe(false);
    expect(file.recovery.indexProblem).toMatch(problem);
    expect(file.recovery.dropped.map((d) => [d.problem, d.record, d.offset, d.kind])).toEqual([['corrupt', damagedFrame.record, damagedFrame.offset, KIND_NAME[kind]]]);
    expect(file.totalSteps).toBe(original.totalSteps);
    expect(file.episodes).toEqual(original.episodes);
    expect(readEverything(file)).toEqual(readEverything(original));
    expect(file.notes).toEqual(original.notes);
  });
});

describe('one byte flipped in each record of a file that was never closed (opened by scan)', () => {
  const closed = recordSample(false);
  const frames = walkFrames(closed);
  const indexFrame = frames.find((f) => f.kind === KIND.index)!;
  const unclosed = closed.subarray(0, indexFrame.offset);
  const original = openBytes(unclosed);

  it('opens undamaged by scan, with every record kept', () => {
    expect(original.recovery).toEqual({ indexed: false, indexProblem: null, records: indexFrame.record, dropped: [] });
  });

  it.each(frames.filter((f) => f.end <= indexFrame.offset).map((f) => [f.record, KIND_NAME[f.kind], f] as const))(
    'record %i (%s) is reported corrupt at its offset, and nothing else is misread',
    (_, __, frame) => {
      const reports = openAndReadAll(flipByte(unclosed, middleOfPayload(frame)), original);
      expect(reports.unexpected).toEqual([]);
      expect(reports.wrongData).toEqual([]);
      expect([...reports.corruptOffsets]).toEqual([frame.offset]);
    },
  );

  it('leaves a hole, not shifted rows, where a dropped block was', () => {
    const secondBlock = frames.filter((f) => f.kind === KIND.stepBlock)[1];
    const file = openBytes(flipByte(unclosed, middleOfPayload(secondBlock)));
    expect(file.episode(0)).toMatchObject({ length: 3, missingSteps: 2 });
    expect(Array.from(file.readEpisode(0).step)).toEqual([0, 1, 2]);
    const cutAfterFirst = openBytes(flipByte(unclosed, middleOfPayload(frames.filter((f) => f.kind === KIND.stepBlock)[0])));
    expect(Array.from(cutAfterFirst.readEpisode(0).step)).toEqual([3, 4]);
    expect(cutAfterFirst.episode(0).missingSteps).toBe(3);
  });
});

/**
 * A recorder that is killed leaves a prefix of the file it would have written (SPEC.md §1).
 * Every prefix, cut at every byte, must open to exactly the whole records it holds, or be
 * refused with a StepFileError that says it was cut short.
 */
import { isDeepStrictEqual } from 'node:util';
import { describe, expect, it } from 'vitest';
import { StepFileError } from '../../formats/errors.ts';
import { openStepFile, type StepFile } from '../../formats/reader.ts';
import { KIND, policedSource, walkFrames } from './frames.ts';
import { openBytes, readEverything, recordSample } from './sample-recording.ts';

/**
 * Deep equality, checked cheaply first (the sweep compares tens of thousands of values);
 * the test's own expect runs only to report a difference.
 */
function expectSame(actual: unknown, expected: unknown, what: string): void {
  if (!isDeepStrictEqual(actual, expected)) expect(actual, what).toEqual(expected);
}

function openPrefix(file: Uint8Array, length: number): StepFile | StepFileError {
  try {
    return openStepFile(policedSource(file.subarray(0, length)), 'cut.steps');
  } catch (e) {
    if (e instanceof StepFileError) return e;
    throw e;
  }
}

describe.each([false, true])('a step file cut at every byte (compress %s)', (compress) => {
  const file = recordSample(compress);
  const frames = walkFrames(file);
  const original = openBytes(file);
  const everything = readEverything(original);
  const headerEnd = frames[0].end;
  const KIND_NAME: Record<number, string> = { 1: 'header', 2: 'step block', 3: 'episode end', 4: 'snapshot', 5: 'note', 6: 'index', 7: 'trailer' };

  it('is a whole file when not cut: it opens through its index', () => {
    expect(frames.at(-1)!.end).toBe(file.length);
    expect(frames.map((f) => f.kind).slice(-2)).toEqual([KIND.index, KIND.trailer]);
    expect(original.recovery).toEqual({ indexed: true, indexProblem: null, records: frames.length, dropped: [] });
    expect(everything.blocks).toHaveLength(5);
    expect(everything.snapshots).toHaveLength(2);
  });

  it('refuses every prefix that ends before the header is whole, as cut short', () => {
    for (let length = 0; length < headerEnd; length++) {
      const opened = openPrefix(file, length);
      expect(opened, `length ${length}`).toBeInstanceOf(StepFileError);
      const error = opened as StepFileError;
      expect(error.problem, `length ${length}`).toBe('cut-short');
      expect(error.offset).toBe(length < 8 ? 0 : 8);
      expect(error.file).toBe('cut.steps');
    }
  });

  it('opens every longer prefix to exactly the records that fit, each reading back equal to the original', () => {
    const fullEpisodes = new Map(original.episodes.map((e) => [e.episode, original.readEpisode(e.episode)]));
    for (let length = headerEnd; length <= file.length; length++) {
      const opened = openPrefix(file, length);
      expect(opened, `length ${length}`).not.toBeInstanceOf(StepFileError);
      const prefix = opened as StepFile;
      const whole = frames.filter((f) => f.end <= length);
      const wholeOf = (kind: number) => whole.filter((f) => f.kind === kind).length;
      const what = `length ${length} of ${file.length}`;

      expectSame(prefix.recovery.indexed, length === file.length, `${what}: indexed`);
      expectSame(prefix.recovery.records, whole.length, `${what}: whole records`);
      const cutAt = whole.at(-1)!.end;
      if (cutAt === length) {
        expectSame(prefix.recovery.dropped, [], `${what}: ends on a record boundary`);
      } else {
        const inFrame = length - cutAt < 9;
        const { detail, ...dropped } = prefix.recovery.dropped[0] ?? {};
        expectSame(prefix.recovery.dropped.length, 1, `${what}: dropped`);
        expectSame(typeof detail, 'string', `${what}: detail`);
        expectSame(
          dropped,
          { problem: 'cut-short', offset: cutAt, record: whole.length, kind: inFrame ? null : KIND_NAME[file[cutAt + 4]], bytes: length - cutAt },
          `${what}: dropped`,
        );
      }

      expectSame(prefix.header, original.header, `${what}: header`);
      expectSame(prefix.blocks, original.blocks.slice(0, wholeOf(KIND.stepBlock)), `${what}: block list`);
      prefix.blocks.forEach((_, i) => expectSame(prefix.readBlock(i), everything.blocks[i], `${what}, block ${i}`));
      expectSame(prefix.snapshots, original.snapshots.slice(0, wholeOf(KIND.snapshot)), `${what}: snapshot list`);
      prefix.snapshots.forEach((ref, i) => expectSame(prefix.readSnapshot(ref), everything.snapshots[i], `${what}, snapshot ${i}`));
      expectSame(prefix.notes, original.notes.slice(0, wholeOf(KIND.note)), `${what}: notes`);
      for (const e of prefix.episodes) {
        expectSame(e.end, e.episode < wholeOf(KIND.episodeEnd) ? original.episode(e.episode).end : null, `${what}, end of episode ${e.episode}`);
        expectSame(e.missingSteps, 0, `${what}: missing steps`);
        // An episode cut short reads as the first steps of the original episode.
        const steps = prefix.readEpisode(e.episode);
        const full = fullEpisodes.get(e.episode)!;
        expectSame(
          [steps.step, steps.state, steps.action, steps.reward, steps.flags, steps.q, steps.epsilon, steps.extras, steps.weights],
          [
            full.step.subarray(0, steps.n),
            full.state.subarray(0, steps.state.length),
            full.action.subarray(0, steps.n),
            full.reward.subarray(0, steps.n),
            full.flags.subarray(0, steps.n),
            full.q.subarray(0, steps.q.length),
            steps.n ? full.epsilon!.subarray(0, steps.n) : null,
            { tdError: full.extras.tdError.subarray(0, steps.n) },
            full.weights.filter(([row]) => row < steps.n),
          ],
          `${what}, episode ${e.episode}`,
        );
      }
    }
  });

  it('names the record and its kind when the file ends inside a step block', () => {
    const block = frames.find((f) => f.kind === KIND.stepBlock)!;
    const prefix = openPrefix(file, block.offset + 20) as StepFile;
    expect(prefix.recovery.dropped).toEqual([
      {
        problem: 'cut-short',
        offset: block.offset,
        record: block.record,
        kind: 'step block',
        bytes: 20,
        detail: `step block record ${block.record} needs ${block.end - block.offset} bytes, the file ends after 20 (a recorder stopped mid-write, or the length field is damaged)`,
      },
    ]);
    expect(prefix.damaged).toBe(true);
  });
});

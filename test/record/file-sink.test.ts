import { spawnSync } from 'node:child_process';
import { existsSync, mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { afterAll, describe, expect, it } from 'vitest';
import { openStepFilePath } from '../../formats/node.ts';
import { openStepFile } from '../../formats/reader.ts';
import { bytesSource } from '../../formats/source.ts';
import { FileSink, recordToFile } from '../../src/record/node.ts';
import { createRecorder } from '../../src/record/recorder.ts';
import { BLOCK_SIZE, CHILD_HEADER, ENDED_EPISODES, STEPS_BEFORE_KILL, trolleyStep } from './trolley-steps.ts';

const folder = mkdtempSync(join(tmpdir(), 'episcope-file-sink-'));
afterAll(() => rmSync(folder, { recursive: true, force: true }));
let fileCount = 0;
const freshPath = () => join(folder, `run-${++fileCount}.steps`);

function recordEpisodes(rec: ReturnType<typeof recordToFile>, lengths: number[]) {
  lengths.forEach((length, episode) => {
    for (let t = 0; t < length; t++) rec.step(trolleyStep(episode, t));
    rec.endEpisode();
  });
}

/** The f32 state column of steps 0..n-1 of an episode, as trolleyStep makes it. */
const statesOf = (episode: number, n: number) => Float32Array.from(Array.from({ length: n }, (_, t) => trolleyStep(episode, t).state).flat());

describe('FileSink', () => {
  it('records a step file on disk that opens through its index', () => {
    const path = freshPath();
    const rec = recordToFile(path, CHILD_HEADER, { blockSize: 4 });
    recordEpisodes(rec, [6, 3]);
    rec.close();
    const file = openStepFilePath(path);
    try {
      expect(file.recovery).toEqual({ indexed: true, indexProblem: null, records: 1 + 3 + 2 + 2, dropped: [] });
      expect(file.name).toBe(path);
      expect(file.size).toBe(rec.stats.bytesWritten);
      expect(file.readEpisode(0).state).toEqual(statesOf(0, 6));
      expect(file.readEpisode(1).state).toEqual(statesOf(1, 3));
    } finally {
      file.close();
    }
  });

  it('writes the same bytes as the in-memory sink would', () => {
    const path = freshPath();
    const header = { ...CHILD_HEADER, createdAt: '2025-01-01T00:00:00.000Z' };
    const onDisk = recordToFile(path, header, { blockSize: 4, compress: true });
    recordEpisodes(onDisk, [5]);
    onDisk.close();
    const chunks: Uint8Array[] = [];
    const inMemory = createRecorder({ write: (b) => void chunks.push(b.slice()), close() {} }, header, { blockSize: 4, compress: true });
    recordEpisodes(inMemory, [5]);
    inMemory.close();
    expect(new Uint8Array(readFileSync(path))).toEqual(new Uint8Array(Buffer.concat(chunks)));
  });

  it('refuses to overwrite an existing file, and leaves it as it was', () => {
    const path = freshPath();
    writeFileSync(path, 'an earlier recording');
    expect(() => new FileSink(path)).toThrow(`${path}: already exists; refusing to overwrite a recording (pass overwrite to replace it)`);
    expect(() => recordToFile(path, CHILD_HEADER)).toThrow(/already exists/);
    expect(readFileSync(path, 'utf8')).toBe('an earlier recording');
  });

  it('replaces an existing file when asked to with overwrite: true', () => {
    const path = freshPath();
    writeFileSync(path, 'an earlier recording');
    const rec = recordToFile(path, CHILD_HEADER, { overwrite: true });
    recordEpisodes(rec, [2]);
    rec.close();
    const file = openStepFilePath(path);
    expect(file.totalSteps).toBe(2);
    file.close();
  });

  it('says why it cannot create a file in a folder that does not exist', () => {
    const path = join(folder, 'no such folder', 'run.steps');
    expect(() => new FileSink(path)).toThrow(`${path}: cannot create the step file (ENOENT)`);
  });

  it('records with durable: true (fsync at each episode end and at close)', () => {
    const path = freshPath();
    const rec = recordToFile(path, CHILD_HEADER, { durable: true, blockSize: 2 });
    recordEpisodes(rec, [3, 1]);
    rec.close();
    const file = openStepFilePath(path);
    expect(file.episodes.map((e) => e.length)).toEqual([3, 1]);
    file.close();
  });

  it('leaves a file that opens by scan, every flushed block readable, when close() is never called', () => {
    const path = freshPath();
    const sink = new FileSink(path);
    const rec = createRecorder(sink, CHILD_HEADER, { blockSize: 4 });
    recordEpisodes(rec, [9]);
    for (let t = 0; t < 6; t++) rec.step(trolleyStep(1, t)); // one block of 4 reaches the file, 2 steps stay open
    // Read the file from disk while the writer still holds it open.
    const file = openStepFilePath(path);
    try {
      expect(file.recovery).toEqual({ indexed: false, indexProblem: null, records: 1 + 3 + 1 + 1, dropped: [] });
      expect(file.damaged).toBe(true);
      expect(file.episodes.map((e) => [e.episode, e.length, e.end?.length ?? null])).toEqual([
        [0, 9, 9],
        [1, 4, null],
      ]);
      expect(file.readEpisode(0).state).toEqual(statesOf(0, 9));
      expect(file.readEpisode(1).state).toEqual(statesOf(1, 4));
      file.blocks.forEach((_, i) => expect(file.readBlock(i).n).toBe([4, 4, 1, 4][i]));
    } finally {
      file.close();
      sink.close(); // release the descriptor without writing the index
    }
  });
});

describe('a recorder process killed with SIGKILL mid-episode', () => {
  it('leaves a file with its first three episodes whole and every whole block of the fourth', () => {
    const path = freshPath();
    const child = fileURLToPath(new URL('./killed-recorder.child.ts', import.meta.url));
    const result = spawnSync(process.execPath, ['--import', 'tsx', child, path], { cwd: fileURLToPath(new URL('../..', import.meta.url)), encoding: 'utf8', timeout: 20_000 });
    expect(result.stderr).toBe('');
    expect(result.signal).toBe('SIGKILL');
    expect(existsSync(path)).toBe(true);

    const file = openStepFile(bytesSource(new Uint8Array(readFileSync(path))), path);
    expect(file.recovery).toMatchObject({ indexed: false, dropped: [] });
    const killedEpisode = ENDED_EPISODES.length;
    const wholeBlocks = Math.floor(STEPS_BEFORE_KILL / BLOCK_SIZE);
    expect(file.episodes.map((e) => [e.episode, e.length, e.end?.length ?? null, e.missingSteps])).toEqual([
      ...ENDED_EPISODES.map((length, episode) => [episode, length, length, 0]),
      [killedEpisode, wholeBlocks * BLOCK_SIZE, null, 0],
    ]);
    ENDED_EPISODES.forEach((length, episode) => {
      const steps = file.readEpisode(episode);
      expect(steps.state).toEqual(statesOf(episode, length));
      expect(Array.from(steps.action)).toEqual(Array.from({ length }, (_, t) => trolleyStep(episode, t).action));
      expect(steps.end?.reason).toBe('time limit');
      expect(steps.end?.return).toBe(Array.from({ length }, (_, t) => trolleyStep(episode, t).reward).reduce((a, b) => a + b, 0));
    });
    const partial = file.readEpisode(killedEpisode);
    expect(partial.state).toEqual(statesOf(killedEpisode, wholeBlocks * BLOCK_SIZE));
    expect(Array.from(partial.step)).toEqual(Array.from({ length: wholeBlocks * BLOCK_SIZE }, (_, t) => t));
  });
});

import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import { StepFileError } from '../../formats/errors.ts';
import { openStepFilePath } from '../../formats/node.ts';
import { openBytes, readEverything, recordSample } from './sample-recording.ts';

const folder = mkdtempSync(join(tmpdir(), 'episcope-open-path-'));
afterAll(() => rmSync(folder, { recursive: true, force: true }));

function refusal(path: string): StepFileError {
  try {
    openStepFilePath(path).close();
  } catch (e) {
    expect(e).toBeInstanceOf(StepFileError);
    return e as StepFileError;
  }
  throw new Error(`expected ${path} to be refused`);
}

describe('openStepFilePath', () => {
  it('reports a missing file as not found, naming the path', () => {
    const path = join(folder, 'never-recorded.steps');
    const error = refusal(path);
    expect(error.problem).toBe('not-found');
    expect(error.file).toBe(path);
    expect(error.offset).toBeNull();
    expect(error.message).toBe(`${path}: no such file`);
  });

  it('reports a folder as not a step file', () => {
    const error = refusal(folder);
    expect(error.problem).toBe('not-a-step-file');
    expect(error.message).toBe(`${folder}: is a folder, expected a step file`);
  });

  it.each([
    ['an empty file', new Uint8Array(0), 'cut-short'],
    ['a text file', new TextEncoder().encode('hello world'), 'not-a-step-file'],
  ])('refuses %s on disk as %s', (name, bytes, problem) => {
    const path = join(folder, `${name.replace(/ /g, '-')}.steps`);
    writeFileSync(path, bytes);
    const error = refusal(path);
    expect(error.problem).toBe(problem);
    expect(error.file).toBe(path);
  });

  it('reads a closed file from disk exactly as from memory, through its index', () => {
    const bytes = recordSample(true);
    const path = join(folder, 'sample.steps');
    writeFileSync(path, bytes);
    const fromDisk = openStepFilePath(path);
    try {
      const fromMemory = openBytes(bytes, path);
      expect(fromDisk.recovery.indexed).toBe(true);
      expect(fromDisk.header).toEqual(fromMemory.header);
      expect(fromDisk.episodes).toEqual(fromMemory.episodes);
      expect(fromDisk.notes).toEqual(fromMemory.notes);
      expect(readEverything(fromDisk)).toEqual(readEverything(fromMemory));
    } finally {
      fromDisk.close();
    }
  });

  it('reads a file cut short on disk by scan', () => {
    const bytes = recordSample(false);
    const path = join(folder, 'cut.steps');
    writeFileSync(path, bytes.subarray(0, bytes.length - 30));
    const file = openStepFilePath(path);
    try {
      expect(file.recovery.indexed).toBe(false);
      expect(file.recovery.dropped).toMatchObject([{ problem: 'cut-short', kind: 'index' }]);
      expect(file.totalSteps).toBe(10);
    } finally {
      file.close();
    }
  });
});

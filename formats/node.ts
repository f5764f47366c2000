/**
 * Node-only: open a step file from disk through a file handle, so that opening a closed file reads
 * its trailer, index and episode ends, not the whole file. Close the StepFile to release the handle.
 */
import { closeSync, fstatSync, openSync, readSync } from 'node:fs';
import { StepFileError } from './errors.ts';
import { openStepFile, type StepFile } from './reader.ts';
import type { ByteSource } from './source.ts';

export function fileSource(path: string): ByteSource & { close(): void } {
  let fd: number;
  try {
    fd = openSync(path, 'r');
  } catch (e) {
    const code = (e as NodeJS.ErrnoException).code;
    throw new StepFileError('not-found', path, null, code === 'ENOENT' ? 'no such file' : `cannot be read (${code})`);
  }
  const stat = fstatSync(fd);
  if (stat.isDirectory()) {
    closeSync(fd);
    throw new StepFileError('not-a-step-file', path, null, 'is a folder, expected a step file');
  }
  return {
    size: stat.size,
    read(offset, length) {
      const out = new Uint8Array(length);
      let done = 0;
      while (done < length) {
        const got = readSync(fd, out, done, length - done, offset + done);
        if (got === 0) throw new StepFileError('cut-short', path, offset + done, 'the file became shorter while it was being read');
        done += got;
      }
      return out;
    },
    close: () => closeSync(fd),
  };
}

export function openStepFilePath(path: string): StepFile {
  const source = fileSource(path);
  try {
    return openStepFile(source, path);
  } catch (e) {
    source.close();
    throw e;
  }
}

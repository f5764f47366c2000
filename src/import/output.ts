/**
 * Writing a step file all-or-nothing: the recorder writes to `OUT.partial-<pid>` in the same
 * folder, and only a finished, closed file is moved onto OUT; on any error the partial file is
 * removed. So an import that fails leaves no half file, and one that is interrupted leaves a file
 * whose name says it is partial. OUT is never replaced unless `force` is given.
 */
import { existsSync, linkSync, renameSync, statSync, unlinkSync } from 'node:fs';
import { dirname } from 'node:path';
import type { ByteSink } from '../../formats/writer.ts';
import { createRecorder, type RecorderHeader, type RecorderOptions } from '../record/recorder.ts';
import { FileSink } from '../record/file-sink.ts';
import type { Recorder } from '../record/types.ts';
import { ImportError } from './errors.ts';

export function partialPath(out: string): string {
  return `${out}.partial-${process.pid}`;
}

/** Refuse early, before any work, when OUT is there already (or is a folder), or its folder is not. */
export function checkOutput(out: string, force: boolean): void {
  const folder = dirname(out);
  if (!existsSync(folder) || !statSync(folder).isDirectory()) throw new ImportError(`${out}: the folder ${folder} does not exist; expected the step file's name in an existing folder`, out);
  if (!existsSync(out)) return;
  if (statSync(out).isDirectory()) throw new ImportError(`${out}: is a folder; expected the name of the step file to write`, out);
  if (!force) throw new ImportError(`${out}: already exists; refusing to overwrite a recording (pass --force to replace it)`, out);
}

/**
 * Record a step file at `out` through `fill`, which gets a recorder on the partial file. Returns
 * what `fill` returns and the size of the file written.
 */
export async function writeStepFile<T>(
  out: string,
  force: boolean,
  header: RecorderHeader,
  options: RecorderOptions,
  fill: (recorder: Recorder) => T | Promise<T>,
): Promise<{ result: T; bytes: number }> {
  checkOutput(out, force);
  const partial = partialPath(out);
  let file: FileSink;
  try {
    // The name carries this process's id, so a file already there is a leftover of a dead process.
    file = new FileSink(partial, { overwrite: true, durable: true });
  } catch (e) {
    throw new ImportError((e as Error).message, partial);
  }
  let open = true;
  // fsync once at close, not at every episode end (the recorder's sync()): the partial file is
  // worthless until it is renamed, and thousands of fsyncs would dominate a large import.
  const sink: ByteSink = {
    write: (bytes) => file.write(bytes),
    close: () => {
      open = false;
      file.close();
    },
  };
  try {
    const recorder = createRecorder(sink, header, options);
    const result = await fill(recorder);
    recorder.close();
    const bytes = recorder.stats.bytesWritten;
    publish(partial, out, force);
    return { result, bytes };
  } catch (e) {
    if (open) {
      try {
        file.close();
      } catch {
        // the first error is the one to report
      }
    }
    removeQuietly(partial);
    throw e;
  }
}

/**
 * Move the finished file onto OUT. Without --force a hard link is the atomic "create unless it
 * exists" (a recording made meanwhile is never replaced); where links are not supported, a check
 * then a rename.
 */
function publish(partial: string, out: string, force: boolean): void {
  if (force) {
    renameSync(partial, out);
    return;
  }
  try {
    linkSync(partial, out);
    unlinkSync(partial);
    return;
  } catch (e) {
    const code = (e as NodeJS.ErrnoException).code;
    if (code === 'EEXIST') throw new ImportError(`${out}: appeared while the import ran; refusing to overwrite it (pass --force to replace it)`, out);
    if (code !== 'EPERM' && code !== 'ENOTSUP' && code !== 'EOPNOTSUPP' && code !== 'EXDEV' && code !== 'EMLINK') {
      throw new ImportError(`${out}: cannot be created (${code ?? (e as Error).message})`, out);
    }
  }
  if (existsSync(out)) throw new ImportError(`${out}: appeared while the import ran; refusing to overwrite it (pass --force to replace it)`, out);
  renameSync(partial, out);
}

function removeQuietly(path: string): void {
  try {
    unlinkSync(path);
  } catch {
    // already gone, or never made
  }
}

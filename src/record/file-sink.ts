/**
 * A step file on disk (Node only). Each record reaches the operating system in one write as soon
 * as the recorder emits it, so a killed process leaves every whole record readable; `durable`
 * also fsyncs at each episode end, for machines that may lose power.
 */
import { closeSync, fsyncSync, openSync, writeSync } from 'node:fs';
import type { ByteSink } from '../../formats/writer.ts';

export interface FileSinkOptions {
  /** Replace an existing file (default: refuse, so an earlier recording is never lost by accident). */
  overwrite?: boolean;
  durable?: boolean;
}

export class FileSink implements ByteSink {
  private fd: number;

  constructor(
    readonly path: string,
    private readonly options: FileSinkOptions = {},
  ) {
    try {
      this.fd = openSync(path, options.overwrite ? 'w' : 'wx');
    } catch (e) {
      const err = e as NodeJS.ErrnoException;
      if (err.code === 'EEXIST') throw new Error(`${path}: already exists; refusing to overwrite a recording (pass overwrite to replace it)`);
      throw new Error(`${path}: cannot create the step file (${err.code ?? err.message})`);
    }
  }

  write(bytes: Uint8Array): void {
    let done = 0;
    while (done < bytes.length) done += writeSync(this.fd, bytes, done, bytes.length - done);
  }

  /** Called by the recorder at each episode end. */
  sync(): void {
    if (this.options.durable) fsyncSync(this.fd);
  }

  close(): void {
    if (this.options.durable) fsyncSync(this.fd);
    closeSync(this.fd);
  }
}

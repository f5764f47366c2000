import type { ByteSink } from '../../formats/writer.ts';

/** Collects a step file in memory (the browser, tests). `bytes()` is valid at any time, also before close. */
export class MemorySink implements ByteSink {
  private chunks: Uint8Array[] = [];
  private length = 0;
  closed = false;

  write(bytes: Uint8Array): void {
    this.chunks.push(bytes.slice());
    this.length += bytes.length;
  }

  close(): void {
    this.closed = true;
  }

  bytes(): Uint8Array {
    if (this.chunks.length !== 1) {
      const all = new Uint8Array(this.length);
      let at = 0;
      for (const c of this.chunks) {
        all.set(c, at);
        at += c.length;
      }
      this.chunks = [all];
    }
    return this.chunks[0] ?? new Uint8Array(0);
  }
}

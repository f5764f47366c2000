/**
 * In the browser there is no node:zlib, so the codec falls back to its portable CRC and to fflate
 * for deflate (formats/crc32.ts, formats/deflate.ts). Files move between the two: a file recorded
 * by the Node recorder is opened in the viewer, and a clip cut in the viewer is read by the CLI.
 * Here the codec is loaded a second time with node's built-in modules hidden, and the two are
 * checked against each other.
 */
import { beforeAll, describe, expect, it, vi } from 'vitest';
import * as nodeColumns from '../../formats/columns.ts';
import { deflateRawSync } from 'node:zlib';
import * as nodeDeflate from '../../formats/deflate.ts';
import { openStepFile } from '../../formats/reader.ts';
import { bytesSource } from '../../formats/source.ts';
import { createRecorder } from '../../src/record/recorder.ts';
import { MemorySink } from '../../src/record/memory-sink.ts';
import { TROLLEY_HEADER, readEverything, recordSample } from './sample-recording.ts';
import { seededBytes } from './seeded-bytes.ts';
import { xorShuffleDeflateBySpec } from './columns-by-spec.ts';
import type { WireArray } from '../../formats/columns.ts';

interface BrowserCodec {
  columns: typeof import('../../formats/columns.ts');
  crc: typeof import('../../formats/crc32.ts');
  deflate: typeof import('../../formats/deflate.ts');
  reader: typeof import('../../formats/reader.ts');
  recorder: typeof import('../../src/record/recorder.ts');
}

/** Import fresh copies of the codec while `process.getBuiltinModule` is hidden, as in a browser. */
async function loadBrowserCodec(): Promise<BrowserCodec> {
  const proc = process as { getBuiltinModule?: unknown };
  const saved = proc.getBuiltinModule;
  proc.getBuiltinModule = undefined;
  try {
    vi.resetModules();
    return {
      columns: await import('../../formats/columns.ts'),
      crc: await import('../../formats/crc32.ts'),
      deflate: await import('../../formats/deflate.ts'),
      reader: await import('../../formats/reader.ts'),
      recorder: await import('../../src/record/recorder.ts'),
    };
  } finally {
    proc.getBuiltinModule = saved;
    vi.resetModules();
  }
}

let browser: BrowserCodec;
beforeAll(async () => {
  browser = await loadBrowserCodec();
});

/** A smooth column that shuffle-deflate compresses. */
const smooth = (n: number) => Float32Array.from({ length: n }, (_, i) => Math.fround(Math.sin(i / 50)));

describe('the codec without node:zlib (as in a browser)', () => {
  it('is a separate copy of the modules', () => {
    expect(browser.columns).not.toBe(nodeColumns);
    expect(browser.deflate).not.toBe(nodeDeflate);
  });

  it('computes the same CRC-32 at every length as the Node codec', async () => {
    const { crc32: nodeCrc32 } = await import('../../formats/crc32.ts');
    for (const length of [0, 1, 63, 64, 65, 1000, 65536]) {
      const bytes = seededBytes(length, length);
      expect(browser.crc.crc32(bytes), `length ${length}`).toBe(nodeCrc32(bytes));
    }
  });

  it('decodes an xor-shuffle-deflate column (version-1 files) bit for bit, as the Node codec does', () => {
    const column = smooth(3000);
    const wire = xorShuffleDeflateBySpec('f32', [1000, 3], new Uint8Array(column.buffer));
    const inBrowser = browser.columns.decodeArray(wire as WireArray, 'state', 1 << 20) as Float32Array;
    const inNode = nodeColumns.decodeArray(wire as WireArray, 'state', 1 << 20) as Float32Array;
    expect(new Uint32Array(inBrowser.slice().buffer)).toEqual(new Uint32Array(column.buffer));
    expect(new Uint32Array(inNode.slice().buffer)).toEqual(new Uint32Array(column.buffer));
  });

  it('opens a compressed file recorded in Node exactly as the Node reader does', () => {
    const bytes = recordSample(true);
    const inNode = openStepFile(bytesSource(bytes), 'sample.steps');
    const inBrowser = browser.reader.openStepFile(bytesSource(bytes), 'sample.steps');
    expect(inBrowser.recovery).toEqual(inNode.recovery);
    expect(inBrowser.episodes).toEqual(inNode.episodes);
    expect(readEverything(inBrowser)).toEqual(readEverything(inNode));
  });

  it('records a compressed file that the Node reader opens exactly as the browser reader does', () => {
    const sink = new MemorySink();
    const rec = browser.recorder.createRecorder(sink, TROLLEY_HEADER, { blockSize: 64, compress: true });
    const column = smooth(200);
    for (let t = 0; t < 100; t++) rec.step({ state: [column[t], column[t + 100]], action: t % 3, reward: 1, q: [t, t, t] });
    rec.endEpisode();
    rec.close();
    const inNode = openStepFile(bytesSource(sink.bytes()), 'clip.steps');
    const inBrowser = browser.reader.openStepFile(bytesSource(sink.bytes()), 'clip.steps');
    expect(inNode.recovery.indexed).toBe(true);
    expect(readEverything(inNode)).toEqual(readEverything(inBrowser));
    expect(inNode.readEpisode(0).state).toEqual(Float32Array.from({ length: 200 }, (_, i) => column[(i % 2) * 100 + (i >> 1)]));
    // And the Node recorder writes the same file from the same calls.
    const nodeSink = new MemorySink();
    const nodeRec = createRecorder(nodeSink, TROLLEY_HEADER, { blockSize: 64, compress: true });
    for (let t = 0; t < 100; t++) nodeRec.step({ state: [column[t], column[t + 100]], action: t % 3, reward: 1, q: [t, t, t] });
    nodeRec.endEpisode();
    nodeRec.close();
    expect(readEverything(openStepFile(bytesSource(nodeSink.bytes()), 'clip.steps'))).toEqual(readEverything(inNode));
  });
});

describe('a shuffle-deflate column whose stream holds more bytes than its shape', () => {
  // A writer bug, not damage: the record's CRC is good, but the stream inflates to 2 × 4000 bytes
  // while the shape says 4000. SPEC.md §3: "inflate, check the result is exactly N·w bytes".
  const longStream = () => new Uint8Array(deflateRawSync(new Uint8Array(8000).fill(7)));
  const wire = () => ({ dtype: 'f32' as const, shape: [1000], data: longStream(), codec: 'shuffle-deflate' as const });

  it('is refused by the Node codec', () => {
    expect(() => nodeColumns.decodeArray(wire(), 'state', 1 << 20)).toThrow(/^state: deflate stream is damaged/);
  });

  it('is refused by the codec without node:zlib too (formats/deflate.ts: "a stream that would exceed it is an error")', () => {
    expect(() => browser.deflate.inflateRaw(longStream(), 4000)).toThrow();
    expect(() => browser.columns.decodeArray(wire(), 'state', 1 << 20)).toThrow(/^state: /);
  });
});

/**
 * What episcope writes, read by an independent MessagePack implementation. The bytes are defined
 * by the MessagePack specification (Sadayuki Furuhashi, msgpack.org, spec.md; the 2013 revision
 * that added the str and bin formats); `@msgpack/msgpack` (the MessagePack project's JavaScript
 * implementation, npm registry) decodes them here, and the framing is walked by hand
 * (test/formats/frames.ts), so neither step goes through episcope's codec.
 */
import { ExtData, decode } from '@msgpack/msgpack';
import { describe, expect, it } from 'vitest';
import { createRecorder } from '../../src/record/recorder.ts';
import { RecordError } from '../../src/record/errors.ts';
import { MemorySink } from '../../src/record/memory-sink.ts';
import { decodeArrayMapBySpec } from './columns-by-spec.ts';
import { decodePackedBySpec } from './packed-by-spec.ts';
import { KIND, MAGIC_TEXT, walkFrames } from './frames.ts';

const bytesOf = (a: Float32Array | Uint8Array | Uint32Array) => new Uint8Array(a.buffer, a.byteOffset, a.byteLength);

const HEADER = {
  stateDims: [
    { name: 'position', unit: 'm' },
    { name: 'velocity', unit: 'm/s' },
  ],
  actions: ['reverse', 'idle', 'forward'],
  gamma: 0.99,
  system: { kind: 'mountain-car', title: 'crater rover', map: { position: 0, velocity: 1 }, params: { minPosition: -1.2, goalPosition: 0.5 } },
  extras: ['tdError'],
  run: { seed: 5, net: { hidden: [32, 32], dueling: false, lr: 0.00025 }, note: 'rim at 0.5 m', nothing: null, big: 2 ** 40, negative: -7 },
  createdAt: '2025-06-01T12:00:00.000Z',
};

function recordRover(compress: boolean) {
  const sink = new MemorySink();
  const rec = createRecorder(sink, HEADER, { blockSize: 4, compress });
  const states = [-0.5, 0, -0.49, 0.001, -0.48, 0.002, -0.47, 0.003, -0.46, 0.004];
  for (let t = 0; t < 5; t++) {
    rec.step({
      state: states.slice(t * 2, t * 2 + 2),
      action: t % 3,
      reward: -1,
      q: [-t, -t - 0.5, -t - 0.25],
      explored: t === 1,
      epsilon: 0.5,
      extras: t === 2 ? {} : { tdError: t / 8 },
    });
  }
  rec.endEpisode({ reason: 'rim reached', finalState: [0.5, 0.01] });
  rec.note({ episode: 0, from: 1, to: 2, text: 'rocking back' });
  rec.close();
  return { bytes: sink.bytes(), states: Float32Array.from(states) };
}

describe.each([false, true])('a step file decoded independently (compress %s)', (compress) => {
  const { bytes, states } = recordRover(compress);
  const frames = walkFrames(bytes);

  it('starts with the 8-byte magic and is a whole sequence of CRC-checked frames to its last byte', () => {
    expect(new TextDecoder().decode(bytes.subarray(0, 8))).toBe(MAGIC_TEXT);
    expect(frames.every((f) => f.crcOk)).toBe(true);
    expect(frames.at(-1)!.end).toBe(bytes.length);
    expect(frames.map((f) => f.kind)).toEqual([
      KIND.header,
      KIND.stepBlock,
      KIND.stepBlock,
      KIND.episodeEnd,
      KIND.note,
      KIND.index,
      KIND.trailer,
    ]);
  });

  it('writes a header payload that decodes to the same values', () => {
    expect(decode(frames[0].payload)).toEqual({ format: 'episcope step file', version: compress ? 2 : 1, ...HEADER });
  });

  it('writes episode end and note payloads that decode to the same values', () => {
    const end = decode(frames[3].payload) as Record<string, any>;
    expect({ ...end, finalState: undefined }).toEqual({
      episode: 0,
      length: 5,
      return: -5,
      outcome: 'ended',
      failed: false,
      reason: 'rim reached',
      mode: 'train',
      finalState: undefined,
      finalQ: null,
    });
    expect(end.finalState.dtype).toBe('f32');
    expect(end.finalState.shape).toEqual([2]);
    expect(end.finalState.data).toEqual(bytesOf(Float32Array.of(0.5, 0.01)));
    expect(decode(frames[4].payload)).toEqual({ episode: 0, from: 1, to: 2, text: 'rocking back' });
  });

  it('writes an index whose tables point at the frames found by walking the file', () => {
    const index = decode(frames[5].payload) as Record<string, any>;
    const f64s = (wire: any) => Array.from(new Float64Array(decodeArrayMapBySpec(wire).slice().buffer));
    const u32s = (wire: any) => Array.from(new Uint32Array(decodeArrayMapBySpec(wire).slice().buffer));
    const of = (kind: number) => frames.filter((f) => f.kind === kind);
    expect(index.header).toEqual({ offset: frames[0].offset, length: frames[0].length });
    expect(f64s(index.blocks.offset)).toEqual(of(KIND.stepBlock).map((f) => f.offset));
    expect(u32s(index.blocks.length)).toEqual(of(KIND.stepBlock).map((f) => f.length));
    expect([u32s(index.blocks.episode), u32s(index.blocks.firstStep), u32s(index.blocks.n)]).toEqual([[0, 0], [0, 4], [4, 1]]);
    expect(f64s(index.ends.offset)).toEqual(of(KIND.episodeEnd).map((f) => f.offset));
    expect(u32s(index.ends.episode)).toEqual([0]);
    expect(f64s(index.notes.offset)).toEqual(of(KIND.note).map((f) => f.offset));
    expect(index.snapshots.meta).toEqual([]);
  });

  it('ends with a trailer whose 8-byte payload is the index offset as a little-endian u64', () => {
    const trailer = frames[6];
    expect(trailer.length).toBe(8);
    expect(trailer.end - trailer.offset).toBe(17);
    const view = new DataView(trailer.payload.buffer, trailer.payload.byteOffset, 8);
    expect(view.getBigUint64(0, true)).toBe(BigInt(frames[5].offset));
  });
});

describe('the first step block of that file, decoded independently', () => {
  const { states } = recordRover(false);
  // The values of the first block (rows 0–3), as little-endian bytes.
  const expected = {
    state: bytesOf(states.subarray(0, 8)),
    action: Uint8Array.of(0, 1, 2, 0),
    reward: bytesOf(Float32Array.of(-1, -1, -1, -1)),
    flags: Uint8Array.of(0, 4, 0, 0),
    q: bytesOf(Float32Array.of(-0, -0.5, -0.25, -1, -1.5, -1.25, -2, -2.5, -2.25, -3, -3.5, -3.25)),
    epsilon: bytesOf(Float32Array.of(0.5, 0.5, 0.5, 0.5)),
    tdError: bytesOf(Float32Array.of(0, 0.125, NaN, 0.375)),
  };

  it('writes an unpacked step-block payload (version 1) that decodes to the same values, columns as little-endian bytes', () => {
    const block = decode(walkFrames(recordRover(false).bytes)[1].payload) as Record<string, any>;
    expect(Object.keys(block).sort()).toEqual(['action', 'episode', 'epsilon', 'extras', 'firstStep', 'flags', 'n', 'q', 'reward', 'state', 'weights']);
    expect([block.episode, block.firstStep, block.n]).toEqual([0, 0, 4]);
    expect(block.weights).toEqual([[0, '', '']]);
    const column = (name: string, dtype: string, shape: number[], values: Uint8Array) => {
      const wire = name === 'tdError' ? block.extras[name] : block[name];
      expect([wire.dtype, wire.shape], name).toEqual([dtype, shape]);
      expect(decodeArrayMapBySpec(wire), name).toEqual(values);
    };
    column('state', 'f32', [4, 2], expected.state);
    column('action', 'u8', [4], expected.action);
    column('reward', 'f32', [4], expected.reward);
    column('flags', 'u8', [4], expected.flags);
    column('q', 'f32', [4, 3], expected.q);
    column('epsilon', 'f32', [4], expected.epsilon);
    column('tdError', 'f32', [4], expected.tdError);
  });

  it('writes a packed step block (SPEC §5.2) whose channels decode by the SPEC alone to the same values', () => {
    const block = decode(walkFrames(recordRover(true).bytes)[1].payload);
    expect(block).toBeInstanceOf(Uint8Array);
    const packed = decodePackedBySpec(block as Uint8Array, 4, 2, 3, 1);
    expect(packed.place).toEqual({ episode: 0, firstStep: 0, n: 4 });
    expect(packed.weights).toEqual([[0, '', '']]);
    // Channels: position 0, velocity 1, Q 2–4, reward 5, action 6, flags 7, ε 8, tdError 9 (D = 2, A = 3).
    expect([...packed.channels.keys()].sort((a, b) => a - b)).toEqual([0, 1, 2, 3, 4, 5, 6, 7, 8, 9]);
    const f32Bytes = (...ids: number[]) => {
      const width = ids.length;
      const out = new Uint32Array(4 * width);
      ids.forEach((id, j) => packed.channels.get(id)!.forEach((v, t) => (out[t * width + j] = v)));
      return bytesOf(out);
    };
    expect(f32Bytes(0, 1)).toEqual(expected.state);
    expect(Uint8Array.from(packed.channels.get(6)!)).toEqual(expected.action);
    expect(f32Bytes(5)).toEqual(expected.reward);
    expect(Uint8Array.from(packed.channels.get(7)!)).toEqual(expected.flags);
    expect(f32Bytes(2, 3, 4)).toEqual(expected.q);
    expect(f32Bytes(8)).toEqual(expected.epsilon);
    expect(f32Bytes(9)).toEqual(expected.tdError);
  });

});

/** Every value in a decoded payload, depth first. */
function* allValues(v: unknown): Generator<unknown> {
  yield v;
  if (Array.isArray(v)) for (const x of v) yield* allValues(x);
  else if (v && typeof v === 'object' && !(v instanceof Uint8Array) && !(v instanceof ExtData)) for (const x of Object.values(v)) yield* allValues(x);
}

describe('payloads use standard MessagePack types only (SPEC.md §3: no extension types)', () => {
  it('writes snapshot payloads without extension types', () => {
    const sink = new MemorySink();
    const rec = createRecorder(sink, { stateDims: [{ name: 'x', unit: 'm' }], actions: ['a'], gamma: 0.5, system: { kind: 'rover', map: {} } });
    const layers = [{ inputs: 1, outputs: 1, activation: 'tanh' as const, weights: Float32Array.of(2), bias: Float32Array.of(-1) }];
    rec.snapshot({ role: 'online', trainingStep: 3, layers });
    rec.snapshot({ role: 'target', trainingStep: 3, layers });
    rec.close();
    const payloads = walkFrames(sink.bytes()).filter((f) => f.kind !== KIND.trailer).map((f) => decode(f.payload));
    for (const p of payloads) expect([...allValues(p)].some((v) => v instanceof ExtData)).toBe(false);
    const [online, target] = payloads.slice(1, 3) as Record<string, any>[];
    expect({ ...online, layers: online.layers.map((l: any) => ({ ...l, weights: l.weights.data, bias: l.bias.data })) }).toEqual({
      role: 'online',
      trainingStep: 3,
      id: target.id,
      layers: [{ inputs: 1, outputs: 1, activation: 'tanh', weights: bytesOf(Float32Array.of(2)), bias: bytesOf(Float32Array.of(-1)) }],
    });
    expect(target).toEqual({ role: 'target', trainingStep: 3, id: online.id, layers: null });
  });

  it('never writes an extension type for a run setting left undefined (it is refused, dropped or written as nil)', () => {
    // A settings object with an optional field not set, as TypeScript code builds them.
    const settings: { seed: number; targetSync?: number } = { seed: 1, targetSync: undefined };
    const sink = new MemorySink();
    let rec;
    try {
      rec = createRecorder(sink, { stateDims: [{ name: 'x', unit: 'm' }], actions: ['a'], gamma: 0.5, system: { kind: 'rover', map: {} }, run: settings });
    } catch (e) {
      expect(e).toBeInstanceOf(RecordError); // refusing it is a fix too
      return;
    }
    rec.close();
    const header = decode(walkFrames(sink.bytes())[0].payload);
    expect([...allValues(header)].filter((v) => v instanceof ExtData)).toEqual([]);
  });
});

/**
 * The Python writer (formats/python/episcope_steps.py) against the TypeScript reader. Python
 * scripts in this folder write step files and, beside each, a JSON file of what the file must
 * hold, kept from the values they passed in; here every value is read back through
 * `openStepFile` and compared bit for bit (float32 through Uint32Array views of the columns), and
 * the payloads are also decoded by an independent MessagePack implementation (`@msgpack/msgpack`,
 * the MessagePack project's JavaScript package) and the frames walked by hand.
 *
 * Without python3 on PATH these tests fail, saying so: a writer nobody ran is not tested.
 */
import { spawnSync, type SpawnSyncReturns } from 'node:child_process';
import { mkdtempSync, readFileSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { ExtData, decode } from '@msgpack/msgpack';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { bytesSource, openStepFile, snapshotId, type DenseLayer, type EpisodeEnd, type StepFile } from '../../formats/index.ts';
import { decodeArrayMapBySpec, type SpecArrayMap } from '../formats/columns-by-spec.ts';
import { KIND, walkFrames } from '../formats/frames.ts';

const here = fileURLToPath(new URL('.', import.meta.url));
const PYTHON = 'python3';
/** No __pycache__ folders left in the source tree. */
const PY_ENV = { ...process.env, PYTHONDONTWRITEBYTECODE: '1' };
const folder = mkdtempSync(join(tmpdir(), 'episcope-python-writer-'));
afterAll(() => rmSync(folder, { recursive: true, force: true }));

// ------------------------------------------------------------------ what the scripts say the file holds

type Pair = [online: string, target: string];
interface ExpectedSteps {
  state: string[];
  action: number[];
  reward: string[];
  flags: number[];
  q: string[];
  epsilon: (string | null)[];
  tdError: (string | null)[];
  weights: Pair[];
}
interface ExpectedEnd {
  episode: number;
  length: number;
  return: number | string;
  outcome: string;
  failed: boolean;
  reason: string;
  mode: string;
  finalState: string[] | null;
  finalQ: string[] | null;
}
interface ExpectedLayer {
  inputs: number;
  outputs: number;
  activation: DenseLayer['activation'];
  weights: string[];
  bias: string[];
}
interface ExpectedSnapshot {
  role: 'online' | 'target';
  trainingStep: number;
  id: string;
  hasLayers: boolean;
  layers: ExpectedLayer[];
}
interface Expected {
  mode: string;
  blockSize: number;
  compress: boolean;
  numpy: boolean;
  header: Record<string, unknown> & { stateDims: unknown[]; actions: string[] };
  episodes: { episode: number; steps: ExpectedSteps; end: ExpectedEnd | null }[];
  snapshots: ExpectedSnapshot[];
  unstored: ExpectedSnapshot[];
  notes: { episode: number; from: number; to: number; text: string }[];
  errors: string[];
  closed: boolean;
  lostSteps?: number;
  stats?: Record<string, number>;
}

interface Written {
  path: string;
  bytes: Uint8Array;
  expected: Expected;
  run: SpawnSyncReturns<string>;
}

function requirePython(): void {
  const r = spawnSync(PYTHON, ['-c', 'import sys; print("%d.%d" % sys.version_info[:2])'], { encoding: 'utf8' });
  if (r.error || r.status !== 0) {
    throw new Error(
      `python3 was not found or does not run (${r.error?.message ?? r.stderr.trim()}): these tests run formats/python/episcope_steps.py and need Python 3.9 or later on PATH`,
    );
  }
  const [major, minor] = r.stdout.trim().split('.').map(Number);
  if (major < 3 || (major === 3 && minor < 9)) throw new Error(`python3 is ${r.stdout.trim()}; formats/python/episcope_steps.py needs 3.9 or later`);
}

/** Run write_steps.py in one mode; a killed mode must end by SIGKILL, the others with status 0. */
function write(mode: string): Written {
  const path = join(folder, `${mode}.steps`);
  const json = join(folder, `${mode}.json`);
  const run = spawnSync(PYTHON, [join(here, 'write_steps.py'), mode, path, json], { encoding: 'utf8', env: PY_ENV });
  const killed = mode === 'killed' || mode === 'mid-write';
  if (run.error) throw run.error;
  if (killed ? run.signal !== 'SIGKILL' : run.status !== 0) {
    throw new Error(`write_steps.py ${mode} ended with status ${run.status}, signal ${run.signal}:\n${run.stderr}`);
  }
  return { path, bytes: new Uint8Array(readFileSync(path)), expected: JSON.parse(readFileSync(json, 'utf8')) as Expected, run };
}

/**
 * Open as the brief's callers do, from the file's bytes. The Buffer is copied into a plain
 * Uint8Array: formats/reader.ts reads the index length through `.slice().buffer`, and a Node
 * Buffer's slice() is a view of the whole underlying memory, so a Buffer passed as it is reads the
 * wrong four bytes and falls back to the scan.
 */
const open = (w: Written): StepFile => openStepFile(bytesSource(new Uint8Array(readFileSync(w.path))), w.path);

// ------------------------------------------------------------------ bit patterns

const NAN_BITS = '7fc00000';
/** A little-endian hex f32 (struct.pack('<f', x).hex()) as its 32 bits, most significant first. */
const bitsOfHex = (hex: string | null): string => (hex === null ? NAN_BITS : hex.match(/../g)!.reverse().join(''));
/** The bits of every element of a float32 column, through a Uint32Array view of the same memory. */
const bitsOf = (a: Float32Array): string[] => Array.from(new Uint32Array(a.buffer, a.byteOffset, a.length), (x) => x.toString(16).padStart(8, '0'));
const f64 = (v: number | string): number => (v === 'NaN' ? NaN : v === 'Infinity' ? Infinity : v === '-Infinity' ? -Infinity : (v as number));

function runsOf(pairs: Pair[]): [number, string, string][] {
  const runs: [number, string, string][] = [];
  pairs.forEach(([online, target], row) => {
    const last = runs[runs.length - 1];
    if (!last || last[1] !== online || last[2] !== target) runs.push([row, online, target]);
  });
  return runs;
}

function layersOf(s: ExpectedSnapshot): DenseLayer[] {
  const f32 = (hexes: string[]) => new Float32Array(new Uint32Array(hexes.map((h) => parseInt(bitsOfHex(h), 16))).buffer);
  return s.layers.map((l) => ({ inputs: l.inputs, outputs: l.outputs, activation: l.activation, weights: f32(l.weights), bias: f32(l.bias) }));
}

// ------------------------------------------------------------------ the comparison

/** The steps [from, to) of an episode as the file must hold them. */
function slice(steps: ExpectedSteps, from: number, to: number, D: number, A: number) {
  return {
    state: steps.state.slice(from * D, to * D).map(bitsOfHex),
    action: steps.action.slice(from, to),
    reward: steps.reward.slice(from, to).map(bitsOfHex),
    flags: steps.flags.slice(from, to),
    q: steps.q.slice(from * A, to * A).map(bitsOfHex),
    epsilon: steps.epsilon.slice(from, to).some((e) => e !== null) ? steps.epsilon.slice(from, to).map(bitsOfHex) : null,
    tdError: steps.tdError.slice(from, to).map(bitsOfHex),
    weights: runsOf(steps.weights.slice(from, to)),
  };
}

function columnsOf(c: { state: Float32Array; action: Uint32Array; reward: Float32Array; flags: Uint8Array; q: Float32Array; epsilon: Float32Array | null; extras: Record<string, Float32Array>; weights: [number, string, string][] }) {
  return {
    state: bitsOf(c.state),
    action: Array.from(c.action),
    reward: bitsOf(c.reward),
    flags: Array.from(c.flags),
    q: bitsOf(c.q),
    epsilon: c.epsilon && bitsOf(c.epsilon),
    tdError: bitsOf(c.extras.tdError),
    weights: c.weights,
  };
}

function endOf(e: ExpectedEnd) {
  return {
    ...e,
    return: f64(e.return),
    finalState: e.finalState && e.finalState.map(bitsOfHex),
    finalQ: e.finalQ && e.finalQ.map(bitsOfHex),
  };
}
const readEnd = (e: EpisodeEnd) => ({ ...e, finalState: e.finalState && bitsOf(e.finalState), finalQ: e.finalQ && bitsOf(e.finalQ) });

/** Every value the file must hold, read through the TypeScript reader. */
function expectFileHolds(file: StepFile, exp: Expected): void {
  const D = exp.header.stateDims.length;
  const A = exp.header.actions.length;
  const { format: _format, ...header } = exp.header;
  expect(file.header).toEqual(header);

  // Blocks: each episode starts a block, and a block is written every blockSize steps.
  const places = exp.episodes.flatMap((e) => {
    const out: [number, number, number][] = [];
    for (let first = 0; first < e.steps.action.length; first += exp.blockSize) out.push([e.episode, first, Math.min(exp.blockSize, e.steps.action.length - first)]);
    return out;
  });
  expect(file.blocks.map((b) => [b.episode, b.firstStep, b.n])).toEqual(places);
  file.blocks.forEach((b, i) => {
    const steps = exp.episodes.find((e) => e.episode === b.episode)!.steps;
    expect(columnsOf(file.readBlock(i)), `block ${i}`).toEqual(slice(steps, b.firstStep, b.firstStep + b.n, D, A));
  });

  expect(file.episodes.map((e) => [e.episode, e.length, e.end !== null, e.missingSteps])).toEqual(
    exp.episodes.map((e) => [e.episode, e.steps.action.length, e.end !== null, 0]),
  );
  for (const e of exp.episodes) {
    const read = file.readEpisode(e.episode);
    const n = e.steps.action.length;
    expect(read.n).toBe(n);
    expect(Array.from(read.step)).toEqual(Array.from({ length: n }, (_, i) => i));
    expect(columnsOf(read), `episode ${e.episode}`).toEqual(slice(e.steps, 0, n, D, A));
    expect(read.end && readEnd(read.end), `episode ${e.episode} end`).toEqual(e.end && endOf(e.end));
  }

  expect(file.snapshots.map((s) => ({ role: s.role, trainingStep: s.trainingStep, id: s.id, hasLayers: s.hasLayers }))).toEqual(
    exp.snapshots.map(({ layers: _layers, ...meta }) => meta),
  );
  file.snapshots.forEach((ref, i) => {
    const snap = file.readSnapshot(ref); // a record with layers nil gets the layers of the earlier one with its id
    const want = exp.snapshots[i];
    expect(snap.layers.map((l) => ({ ...l, weights: bitsOf(l.weights), bias: bitsOf(l.bias) })), `snapshot ${i}`).toEqual(
      want.layers.map((l) => ({ ...l, weights: l.weights.map(bitsOfHex), bias: l.bias.map(bitsOfHex) })),
    );
    expect(snapshotId(snap.layers), `snapshot ${i}: the TypeScript id of the layers read back`).toBe(ref.id);
    expect(snapshotId(layersOf(want)), `snapshot ${i}: the TypeScript id of the layers Python was given`).toBe(want.id);
  });
  for (const s of exp.unstored) expect(snapshotId(layersOf(s)), 'an id put in force without its weights').toBe(s.id);
  expect(file.notes).toEqual(exp.notes);
}

/** Every payload decoded by @msgpack/msgpack: standard types only, array maps by the SPEC's words. */
function expectIndependentDecode(bytes: Uint8Array, exp: Expected): Map<string, number> {
  const codecs = new Map<string, number>();
  const visit = (v: unknown): void => {
    expect(v).not.toBeInstanceOf(ExtData);
    if (Array.isArray(v)) v.forEach(visit);
    else if (v && typeof v === 'object' && !(v instanceof Uint8Array)) {
      const o = v as Record<string, unknown>;
      if (typeof o.dtype === 'string' && o.data instanceof Uint8Array) {
        const map = o as unknown as SpecArrayMap;
        const raw = decodeArrayMapBySpec(map);
        expect(raw.length).toBe(map.shape.reduce((a, b) => a * b, 1) * { u8: 1, u16: 2, u32: 4, i32: 4, f32: 4, f64: 8 }[map.dtype]!);
        const codec = map.codec ?? 'raw';
        codecs.set(codec, (codecs.get(codec) ?? 0) + 1);
        if (map.codec) expect(map.data.length, 'a compressed column is smaller than its raw bytes').toBeLessThan(raw.length);
      } else Object.values(o).forEach(visit);
    }
  };
  const frames = walkFrames(bytes);
  expect(frames.every((f) => f.crcOk)).toBe(true);
  expect(decode(frames[0].payload), 'the header, decoded by @msgpack/msgpack').toEqual(exp.header);
  for (const f of frames) if (f.kind !== KIND.trailer) visit(decode(f.payload));
  return codecs;
}

// ------------------------------------------------------------------ the tests

const files: Record<string, Written> = {};
let setupError: unknown = null;
beforeAll(() => {
  // Kept, not thrown: every test then fails with this reason instead of being reported as skipped.
  try {
    requirePython();
    for (const mode of ['plain', 'compressed', 'killed', 'mid-write', 'errors']) files[mode] = write(mode);
  } catch (e) {
    setupError = e;
  }
});
/** The file a script wrote in this mode; throws why, when Python could not write it. */
const written = new Proxy(files, {
  get(target, mode: string) {
    if (setupError) throw setupError;
    return target[mode];
  },
});

describe('the Python writer', () => {
  it('runs its own checks: MessagePack bytes from the msgpack.org specification, float32 rounding, codec, snapshot ids', () => {
    requirePython();
    const r = spawnSync(PYTHON, [join(here, 'check_encoder.py'), folder], { encoding: 'utf8', env: PY_ENV });
    expect(r.stderr).toBe('');
    expect(r.status).toBe(0);
    expect(r.stdout).toMatch(/^msgpack ok\nfloat32 ok\ncodec ok\n(numpy ok|numpy not installed.*)\nsnapshot id ok\nok \d+\n$/);
  });
});

describe.each(['plain', 'compressed'])('a step file written by Python (%s), closed properly', (mode) => {
  it('opens through its index', () => {
    const w = written[mode];
    const file = open(w);
    const frames = walkFrames(w.bytes);
    expect(file.recovery).toEqual({ indexed: true, indexProblem: null, records: frames.length, dropped: [] });
    expect(file.damaged).toBe(false);
    expect(frames.at(-1)!.end).toBe(w.bytes.length);
  });

  it('holds every value it was given, bit for bit', () => {
    const w = written[mode];
    expectFileHolds(open(w), w.expected);
  });

  it('covers the cases it was written for', () => {
    const { expected: exp } = written[mode];
    expect(exp.episodes.map((e) => e.steps.action.length)).toEqual([40, 0, 1, 16, 7]);
    const all = exp.episodes.flatMap((e) => [...e.steps.q, ...e.steps.reward]).map(bitsOfHex);
    for (const bits of [NAN_BITS, 'ffc00000', '7f800000', 'ff800000']) expect(all).toContain(bits);
    const eps = exp.episodes.flatMap((e) => e.steps.epsilon);
    expect(eps).toContain(null);
    expect(eps.some((e) => e !== null)).toBe(true);
    expect(new Set(exp.episodes.flatMap((e) => e.steps.flags))).toEqual(new Set([0, 1, 2, 3, 4]));
    expect(exp.snapshots.map((s) => s.hasLayers)).toEqual([true, false, true, true]);
    expect(exp.snapshots[0].layers.map((l) => l.activation)).toEqual(['relu', 'linear']);
    expect(exp.unstored.map((s) => s.role)).toEqual(['target']);
  });

  it('names in its weights runs the ids in force, including a target id put in force mid-block without its weights', () => {
    const file = open(written[mode]);
    const { snapshots, unstored } = written[mode].expected;
    const [first, , second] = snapshots;
    expect(file.readBlock(1).weights).toEqual([
      [0, first.id, first.id],
      [4, first.id, unstored[0].id],
    ]);
    expect(file.readBlock(2).weights).toEqual([[0, second.id, unstored[0].id]]);
    // The SPEC (§12) wants a snapshot written before the first block naming its id; store=False
    // (as in the TypeScript recorder) puts an id in force with no snapshot record at all.
    expect(file.snapshotById(unstored[0].id)).toBeNull();
  });

  it('decodes with @msgpack/msgpack: the header to the same values, every payload of standard types', () => {
    const w = written[mode];
    const codecs = expectIndependentDecode(w.bytes, w.expected);
    if (mode === 'compressed') {
      expect(codecs.get('shuffle-deflate') ?? 0).toBeGreaterThan(0);
      expect([...codecs.keys()].sort()).toEqual(['raw', 'shuffle-deflate']);
    } else {
      expect([...codecs.keys()]).toEqual(['raw']);
    }
  });

  it('ends with an index that points at the frames found by walking the file, and a trailer that points at the index', () => {
    const w = written[mode];
    const frames = walkFrames(w.bytes);
    const index = frames.at(-2)!;
    const trailer = frames.at(-1)!;
    expect([index.kind, trailer.kind, trailer.length]).toEqual([KIND.index, KIND.trailer, 8]);
    expect(new DataView(trailer.payload.buffer, trailer.payload.byteOffset, 8).getBigUint64(0, true)).toBe(BigInt(index.offset));
    const tables = decode(index.payload) as Record<string, Record<string, SpecArrayMap>>;
    const column = (m: SpecArrayMap) => {
      const raw = decodeArrayMapBySpec(m).slice();
      return Array.from(m.dtype === 'f64' ? new Float64Array(raw.buffer) : new Uint32Array(raw.buffer));
    };
    const of = (kind: number) => frames.filter((f) => f.kind === kind);
    expect(tables.header).toEqual({ offset: frames[0].offset, length: frames[0].length });
    for (const [name, kind] of [['blocks', KIND.stepBlock], ['ends', KIND.episodeEnd], ['snapshots', KIND.snapshot], ['notes', KIND.note]] as const) {
      expect(tables[name].offset.dtype).toBe('f64');
      expect(tables[name].length.dtype).toBe('u32');
      expect(column(tables[name].offset), name).toEqual(of(kind).map((f) => f.offset));
      expect(column(tables[name].length), name).toEqual(of(kind).map((f) => f.length));
    }
  });

  it('counts what it wrote', () => {
    const w = written[mode];
    expect(w.expected.stats).toEqual({ steps: 64, episodes: 4, blocks: 6, snapshots: 4, non_finite_q: 5, non_finite_reward: 2, bytes_written: w.bytes.length });
  });
});

describe('a step file whose Python process was killed', () => {
  it('killed between writes: opens by scan, every written block intact, the running episode without an end', () => {
    const w = written.killed;
    const file = open(w);
    expect(file.recovery).toEqual({ indexed: false, indexProblem: null, records: walkFrames(w.bytes).length, dropped: [] });
    expect(file.damaged).toBe(true);
    expect(w.expected.lostSteps).toBe(2); // the open block died with the process
    expectFileHolds(file, w.expected);
    expect(file.episodes.map((e) => [e.length, e.end?.outcome ?? null])).toEqual([
      [6, 'terminal'],
      [8, null],
    ]);
  });

  it('killed halfway through writing a block: reports the cut record, keeps every whole one', () => {
    const w = written['mid-write'];
    const frames = walkFrames(w.bytes);
    const cutAt = frames.at(-1)!.end;
    expect(cutAt).toBeLessThan(w.bytes.length);
    const file = open(w);
    expect(file.recovery.indexed).toBe(false);
    expect(file.recovery.dropped).toEqual([
      {
        problem: 'cut-short',
        offset: cutAt,
        record: frames.length,
        kind: 'step block',
        bytes: w.bytes.length - cutAt,
        detail: expect.stringContaining('a recorder stopped mid-write'),
      },
    ]);
    expectFileHolds(file, w.expected);
  });

  it('cut at any byte inside its last record: the records before it are kept, the cut is reported', () => {
    const w = written.killed;
    const frames = walkFrames(w.bytes);
    const last = frames.at(-1)!;
    for (let size = last.offset + 1; size < last.end; size++) {
      const file = openStepFile(bytesSource(w.bytes.slice(0, size)), `cut at ${size}`);
      expect(file.recovery.dropped.map((d) => [d.problem, d.offset])).toEqual([['cut-short', last.offset]]);
      expect(file.recovery.records).toBe(frames.length - 1);
    }
  });
});

describe('refused calls to the Python writer', () => {
  it('raise ValueError naming the field, the value and what was expected', () => {
    expect(written.errors.expected.errors).toEqual([
      'StepWriter: state_dims is empty; expected at least one (name, unit)',
      'StepWriter: gamma is 1.5; expected a discount in [0, 1]',
      'StepWriter: system.map.angle is 4; expected a state index in 0..3',
      'StepWriter: extras names a column twice',
      'StepWriter: block_size is 0; expected a whole number of steps ≥ 1',
      'StepWriter: run.when is of type object; expected plain data (numbers, strings, booleans, None, lists, maps)',
      `${written.errors.path}: already exists; refusing to overwrite a recording (pass overwrite=True to replace it)`,
      "step: state has 3 values; expected 4 (the header's state dimensions)",
      "step: state has no values; expected 4 (the header's state dimensions)",
      "step: state[2] is 'x'; expected a number",
      'step: q has 1 values; expected 3 (one per action)',
      'step: action is 1.5; expected a whole number in 0..2',
      'step: action is 3; expected a whole number in 0..2',
      'step: action is -1; expected a whole number in 0..2',
      'step: action is True; expected a whole number in 0..2',
      "step: reward is '1' (str); expected a number",
      "step: epsilon is 'high' (str); expected a number",
      'step: extras.loss is not a column of this file; the header declares tdError',
      'step: episode 0 ended at step 3 (terminal); call end_episode() before the next step',
      "end_episode: final_state has 3 values; expected 4 (the header's state dimensions)",
      'end_episode: final_q has 2 values; expected 3 (one per action)',
      "end_episode: outcome is 'crashed'; expected terminal, truncated or ended",
      "snapshot: role is 'critic'; expected 'online' or 'target'",
      'snapshot: training_step is -1; expected a whole number ≥ 0',
      'note: to_step is 2; expected a step index ≥ from_step (5)',
      'step: writer is closed; no call is allowed after close()',
      'close: writer is closed; no call is allowed after close()',
    ]);
  });

  it('leave the file holding exactly the accepted calls', () => {
    const w = written.errors;
    const file = open(w);
    expect(file.recovery.indexed).toBe(true);
    expectFileHolds(file, w.expected);
    expect(file.episodes.map((e) => [e.length, e.end?.outcome ?? null])).toEqual([
      [4, 'terminal'],
      [1, null],
    ]);
  });
});

/**
 * Step-file figures on 1,000,000 steps (D = 4, A = 2), all measured side by side in one run:
 * size against the raw payload and against JSON Lines, the recorder against a plain copy of the
 * same fields into typed arrays, and reading back into typed arrays against parsing the JSON Lines.
 */
import { readdirSync, readFileSync } from 'node:fs';
import { join } from 'node:path';
import { openStepFile } from '../formats/reader.ts';
import { bytesSource } from '../formats/source.ts';
import { FRAME_OVERHEAD } from '../formats/frame.ts';
import { createRecorder } from '../src/record/recorder.ts';
import { MemorySink } from '../src/record/memory-sink.ts';
import { createRandom } from '../src/envs/random.ts';
import { bestOf, type BenchRow } from './timing.ts';

const STEPS = 1_000_000;
const D = 4;
const A = 2;
const EPISODE = 500;
/** What one step carries at its natural width: state and Q as f32, reward f32, action u8, flags u8. */
const RAW_BYTES_PER_STEP = 4 * D + 4 * A + 4 + 1 + 1;

/** A smooth, trolley-like trajectory so that compression sees realistic data, not white noise. */
function makeData() {
  const rng = createRandom(7);
  const state = new Float32Array(STEPS * D);
  const q = new Float32Array(STEPS * A);
  const action = new Uint8Array(STEPS);
  const reward = new Float32Array(STEPS);
  const flags = new Uint8Array(STEPS);
  const s = [0, 0, 0, 0];
  for (let t = 0; t < STEPS; t++) {
    if (t % EPISODE === 0) for (let i = 0; i < D; i++) s[i] = rng.uniform(-0.05, 0.05);
    for (let i = 0; i < D; i++) {
      s[i] += rng.uniform(-0.02, 0.02);
      state[t * D + i] = s[i];
    }
    const base = 5 + s[2] * 10;
    q[t * A] = base + rng.uniform(-0.1, 0.1);
    q[t * A + 1] = base + rng.uniform(-0.1, 0.1);
    action[t] = q[t * A] > q[t * A + 1] ? 0 : 1;
    reward[t] = 0.1 * (1 - Math.abs(s[2]) / 0.21);
    flags[t] = rng.next() < 0.1 ? 4 : 0;
    if (t % EPISODE === EPISODE - 1) flags[t] |= 2;
  }
  return { state, q, action, reward, flags };
}

const header = {
  stateDims: ['x', 'x_dot', 'theta', 'theta_dot'].map((name) => ({ name, unit: '' })),
  actions: ['push left', 'push right'],
  gamma: 0.99,
  system: { kind: 'cart-pole', map: { position: 0, angle: 2 } },
};

class CountingSink {
  bytes = 0;
  write(b: Uint8Array) {
    this.bytes += b.length;
  }
  close() {}
}

function record(data: ReturnType<typeof makeData>, sink: { write(b: Uint8Array): void; close(): void }, compress: boolean) {
  const rec = createRecorder(sink, header, { compress });
  const st = new Float32Array(D);
  const qq = new Float32Array(A);
  const input = { state: st as ArrayLike<number>, q: qq as ArrayLike<number>, action: 0, reward: 0, explored: false, truncated: false };
  for (let t = 0; t < STEPS; t++) {
    st.set(data.state.subarray(t * D, t * D + D));
    qq.set(data.q.subarray(t * A, t * A + A));
    input.action = data.action[t];
    input.reward = data.reward[t];
    input.explored = (data.flags[t] & 4) !== 0;
    input.truncated = (data.flags[t] & 2) !== 0;
    rec.step(input);
    if (input.truncated) rec.endEpisode();
  }
  rec.close();
  return rec.stats;
}

/** The baseline: the same fields, from the same per-step inputs, copied into preallocated typed arrays. */
function plainCopy(data: ReturnType<typeof makeData>) {
  const st = new Float32Array(D);
  const qq = new Float32Array(A);
  const outState = new Float32Array(STEPS * D);
  const outQ = new Float32Array(STEPS * A);
  const outAction = new Uint8Array(STEPS);
  const outReward = new Float32Array(STEPS);
  const outFlags = new Uint8Array(STEPS);
  for (let t = 0; t < STEPS; t++) {
    st.set(data.state.subarray(t * D, t * D + D));
    qq.set(data.q.subarray(t * A, t * A + A));
    for (let i = 0; i < D; i++) outState[t * D + i] = st[i];
    for (let i = 0; i < A; i++) outQ[t * A + i] = qq[i];
    outAction[t] = data.action[t];
    outReward[t] = data.reward[t];
    outFlags[t] = data.flags[t];
  }
  return outFlags[STEPS - 1];
}

function jsonLines(data: ReturnType<typeof makeData>): string {
  const lines: string[] = new Array(STEPS);
  for (let t = 0; t < STEPS; t++) {
    lines[t] = JSON.stringify({
      episode: Math.floor(t / EPISODE),
      step: t % EPISODE,
      state: Array.from(data.state.subarray(t * D, t * D + D)),
      action: data.action[t],
      reward: data.reward[t],
      terminal: false,
      truncated: (data.flags[t] & 2) !== 0,
      explored: (data.flags[t] & 4) !== 0,
      q: Array.from(data.q.subarray(t * A, t * A + A)),
    });
  }
  return lines.join('\n') + '\n';
}

/** The comparison: JSON Lines parsed into the same typed arrays the step-file reader fills. */
function parseJsonLines(text: string) {
  const state = new Float32Array(STEPS * D);
  const q = new Float32Array(STEPS * A);
  const action = new Uint32Array(STEPS);
  const reward = new Float32Array(STEPS);
  const flags = new Uint8Array(STEPS);
  let t = 0;
  let start = 0;
  while (start < text.length) {
    const end = text.indexOf('\n', start);
    const o = JSON.parse(text.slice(start, end));
    for (let i = 0; i < D; i++) state[t * D + i] = o.state[i];
    for (let i = 0; i < A; i++) q[t * A + i] = o.q[i];
    action[t] = o.action;
    reward[t] = o.reward;
    flags[t] = (o.terminal ? 1 : 0) | (o.truncated ? 2 : 0) | (o.explored ? 4 : 0);
    t++;
    start = end + 1;
  }
  return t;
}

function readAll(bytes: Uint8Array) {
  const f = openStepFile(bytesSource(bytes), 'bench');
  let n = 0;
  for (const e of f.episodes) n += f.readEpisode(e.episode).n;
  return n;
}

/** Step-block bytes per step in the committed samples (packed, as the demo writes them). */
function sampleRatios(): { name: string; bytesPerStep: number; ratio: number }[] {
  const dir = join(import.meta.dirname, '..', 'samples');
  let names: string[] = [];
  try {
    names = readdirSync(dir).filter((n) => n.endsWith('.steps'));
  } catch {
    return [];
  }
  return names.map((name) => {
    const f = openStepFile(bytesSource(readFileSync(join(dir, name))), name);
    const D2 = f.header.stateDims.length;
    const A2 = f.header.actions.length;
    let blockBytes = 0;
    for (const b of f.blocks) blockBytes += FRAME_OVERHEAD + b.length;
    const raw = 4 * D2 + 4 * A2 + 4 + (A2 <= 256 ? 1 : 4) + 1 + (f.episodes.some((e) => f.readBlock(e.blocks[0] ?? 0)?.epsilon) ? 4 : 0);
    const per = blockBytes / f.totalSteps;
    return { name, bytesPerStep: per, ratio: per / raw };
  });
}

export function stepFileBench(): { rows: BenchRow[]; figures: Record<string, number> } {
  const data = makeData();
  const mem = new MemorySink();
  record(data, mem, false);
  const plainBytes = mem.bytes();
  const memZ = new MemorySink();
  record(data, memZ, true);
  const packedBytes = memZ.bytes();
  const json = jsonLines(data);
  const jsonBytes = Buffer.byteLength(json);

  const rec = bestOf(3, () => record(data, new CountingSink(), false));
  const recZ = bestOf(3, () => record(data, new CountingSink(), true));
  const copy = bestOf(3, () => plainCopy(data));
  const read = bestOf(3, () => readAll(plainBytes));
  const readZ = bestOf(3, () => readAll(packedBytes));
  const parse = bestOf(1, () => parseJsonLines(json));

  const f = {
    steps: STEPS,
    rawBytesPerStep: RAW_BYTES_PER_STEP,
    bytesPerStep: plainBytes.length / STEPS,
    bytesPerStepCompressed: packedBytes.length / STEPS,
    jsonLinesBytesPerStep: jsonBytes / STEPS,
    sizeVsRaw: plainBytes.length / STEPS / RAW_BYTES_PER_STEP,
    sizeVsRawCompressed: packedBytes.length / STEPS / RAW_BYTES_PER_STEP,
    sizeVsJsonLines: plainBytes.length / jsonBytes,
    recorderStepsPerSecond: STEPS / rec.seconds,
    recorderCompressedStepsPerSecond: STEPS / recZ.seconds,
    plainCopyStepsPerSecond: STEPS / copy.seconds,
    recorderVsPlainCopy: copy.seconds / rec.seconds,
    readMBps: plainBytes.length / 1e6 / read.seconds,
    readCompressedMBps: packedBytes.length / 1e6 / readZ.seconds,
    readCompressedStepsPerSecond: STEPS / readZ.seconds,
    readStepsPerSecond: STEPS / read.seconds,
    jsonLinesParseStepsPerSecond: STEPS / parse.seconds,
    readVsJsonLinesParse: parse.seconds / read.seconds,
  };
  const samples = sampleRatios();
  const rows: BenchRow[] = [
    { what: 'raw payload per step', value: f.rawBytesPerStep, unit: 'bytes' },
    { what: 'step file per step, uncompressed', value: f.bytesPerStep, unit: 'bytes' },
    { what: '  ratio to raw payload', value: f.sizeVsRaw, unit: '×', target: '≤ 1.10', ok: f.sizeVsRaw <= 1.1 },
    { what: 'step file per step, compressed', value: f.bytesPerStepCompressed, unit: 'bytes' },
    { what: '  ratio to raw payload', value: f.sizeVsRawCompressed, unit: '×' },
    { what: 'JSON Lines per step', value: f.jsonLinesBytesPerStep, unit: 'bytes' },
    { what: '  step file / JSON Lines', value: f.sizeVsJsonLines, unit: '×' },
    ...samples.map((s) => ({ what: `sample ${s.name}, blocks per step vs raw`, value: s.ratio, unit: '×', target: '≤ 0.7', ok: s.ratio <= 0.7 })),
    { what: 'recorder.step', value: f.recorderStepsPerSecond, unit: 'steps/s' },
    { what: 'recorder.step, compressing', value: f.recorderCompressedStepsPerSecond, unit: 'steps/s' },
    { what: 'plain copy into typed arrays', value: f.plainCopyStepsPerSecond, unit: 'steps/s' },
    { what: '  recorder / plain copy', value: f.recorderVsPlainCopy, unit: '×', target: '≥ 0.333', ok: f.recorderVsPlainCopy >= 1 / 3 },
    { what: 'read to typed arrays', value: f.readMBps, unit: 'MB/s' },
    { what: 'read to typed arrays, compressed file', value: f.readCompressedMBps, unit: 'MB/s' },
    { what: '  the same in steps', value: f.readCompressedStepsPerSecond, unit: 'steps/s' },
    { what: '  read / JSON Lines parse (steps/s)', value: f.readVsJsonLinesParse, unit: '×', target: '≥ 20', ok: f.readVsJsonLinesParse >= 20 },
  ];
  return { rows, figures: { ...f, ...Object.fromEntries(samples.map((s) => [`sample:${s.name}:ratioToRaw`, s.ratio])) } };
}

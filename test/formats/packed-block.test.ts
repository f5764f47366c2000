/**
 * Packed step blocks (SPEC.md §5.2): every bit pattern comes back, whatever the predictor; the
 * Rice codes are the ones the SPEC defines; the encoder finds the predictors a physical
 * trajectory invites; and damage is reported, never decoded into wrong numbers.
 */
import { describe, expect, it } from 'vitest';
import { BitReader, BitWriter, RICE_ESCAPE } from '../../formats/bitstream.ts';
import { Predict, reconstruct, residuals, type Predictor } from '../../formats/channels.ts';
import { decodePacked, encodePacked, type PackedColumns } from '../../formats/packed-block.ts';
import type { WeightsRun } from '../../formats/types.ts';
import { CART_POLE_PARAMS, cartPoleDerivatives, eulerStep } from '../../src/envs/cartpole.ts';
import { decodePackedBySpec } from './packed-by-spec.ts';
import { seededRandom } from './seeded-bytes.ts';

const patterns = (...bits: number[]) => Uint32Array.from(bits);
const asBits = (f: Float32Array) => new Uint32Array(f.buffer, f.byteOffset, f.length);

/** Patterns a float channel must carry unchanged: NaN payloads, signalling NaN, ±0, ±Infinity, subnormals, extremes. */
const AWKWARD = patterns(
  0x7fc00000, 0x7fc00001, 0xffffffff, 0x7f800001, 0x00000000, 0x80000000, 0x7f800000, 0xff800000,
  0x00000001, 0x807fffff, 0x7f7fffff, 0xff7fffff, 0x3f800000, 0x3f800001, 0xbf800000, 0x00800000,
);

const KINDS: [string, Predictor][] = [
  ['previous', { kind: Predict.Previous, ref: 0, c: 0 }],
  ['linear', { kind: Predict.Linear, ref: 0, c: 0 }],
  ['integrate previous', { kind: Predict.IntegratePrevious, ref: 0, c: 0.02 }],
  ['integrate current', { kind: Predict.IntegrateCurrent, ref: 0, c: -3.5 }],
  ['beside', { kind: Predict.Beside, ref: 0, c: 0 }],
];

describe('a channel predicted and rebuilt', () => {
  const random = seededRandom(99);
  const noise = Uint32Array.from({ length: 64 }, () => Math.floor(random() * 2 ** 32));
  const x = Uint32Array.from([...AWKWARD, ...noise, ...AWKWARD.slice().reverse()]);
  const y = Uint32Array.from([...noise.slice(0, AWKWARD.length), ...AWKWARD, ...AWKWARD, ...noise].slice(0, x.length));

  it.each(KINDS)('gives back every bit pattern under the %s predictor, NaN payloads included', (_name, p) => {
    const r = new Uint32Array(x.length);
    residuals(p, x, y, x.length, r);
    const back = new Uint32Array(x.length);
    reconstruct(p, r, y, back);
    expect(Array.from(back)).toEqual(Array.from(x));
  });

  it('predicts an Euler step exactly: the residual of x_{t} = f32(x_{t−1} + τ·v_{t−1}) is zero', () => {
    const v = Float32Array.from({ length: 50 }, (_, t) => Math.sin(t / 7));
    const pos = new Float32Array(50);
    for (let t = 1; t < 50; t++) pos[t] = pos[t - 1] + 0.02 * v[t - 1];
    const r = new Uint32Array(50);
    residuals({ kind: Predict.IntegratePrevious, ref: 0, c: 0.02 }, asBits(pos), asBits(v), 50, r);
    expect(Array.from(r.subarray(1))).toEqual(new Array(49).fill(0));
  });

  it('maps small differences of either sign to small residuals (zigzag)', () => {
    // 1.0, then one pattern up, then two down: differences +1, −2.
    const r = new Uint32Array(3);
    residuals({ kind: Predict.Previous, ref: 0, c: 0 }, patterns(0x3f800000, 0x3f800001, 0x3f7fffff), null, 3, r);
    expect(Array.from(r.subarray(1))).toEqual([2, 3]);
  });
});

describe('Rice codes', () => {
  const bitString = (bytes: Uint8Array) => Array.from(bytes, (b) => b.toString(2).padStart(8, '0')).join('');

  // Worked by hand from the definition (Rice 1979: q = ⌊z / 2^k⌋ in unary, then k low bits),
  // with the unary part as ones ended by a zero, as SPEC.md §5.2 fixes it.
  it.each([
    [0, 0, '0'],
    [5, 0, '111110'],
    [9, 2, '110' + '01'],
    [6, 3, '0' + '110'],
    [1, 32, '0' + '0'.repeat(31) + '1'],
  ])('codes %i with k = %i as %s', (z, k, expected) => {
    const w = new BitWriter();
    w.rice(z, k);
    expect(bitString(w.finish())).toBe(expected.padEnd(Math.ceil(expected.length / 8) * 8, '0'));
  });

  it('escapes to 32 raw bits once the unary part would reach 32 ones (limited length, Weinberger et al. 2000)', () => {
    const w = new BitWriter();
    w.rice(2 ** 32 - 1, 0);
    expect(bitString(w.finish())).toBe('1'.repeat(RICE_ESCAPE) + '1'.repeat(32));
    const w2 = new BitWriter();
    w2.rice(31, 0);
    expect(bitString(w2.finish())).toBe(('1'.repeat(31) + '0').padEnd(32, '0'));
  });

  it('reads back a long mixed sequence, every k from 0 to 32', () => {
    const random = seededRandom(5);
    const items: [number, number][] = [];
    for (let i = 0; i < 3000; i++) {
      const k = i % 33;
      const z = random() < 0.2 ? Math.floor(random() * 2 ** 32) : Math.floor(random() * 2 ** Math.min(32, k + 3));
      items.push([z, k]);
    }
    const w = new BitWriter(4);
    for (const [z, k] of items) w.rice(z, k);
    const r = new BitReader(w.finish());
    expect(items.map(([, k]) => r.rice(k) >>> 0)).toEqual(items.map(([z]) => z));
  });
});

function columns(n: number, D: number, A: number, fill: (t: number) => { s: number[]; q: number[]; r: number }, weights: WeightsRun[] = [[0, '', '']]): PackedColumns {
  const state = new Float32Array(n * D);
  const q = new Float32Array(n * A);
  const reward = new Float32Array(n);
  const action = new Uint32Array(n);
  const flags = new Uint8Array(n);
  for (let t = 0; t < n; t++) {
    const v = fill(t);
    state.set(v.s, t * D);
    q.set(v.q, t * A);
    reward[t] = v.r;
    action[t] = t % A;
    flags[t] = t % 7 === 0 ? 4 : 0;
  }
  flags[n - 1] |= 2;
  return { episode: 3, firstStep: 4096, n, stateSize: D, actionCount: A, state, q, reward, action, flags, epsilon: null, extras: [], weights };
}

function expectSameColumns(c: PackedColumns, bytes: Uint8Array) {
  const back = decodePacked(bytes, c.stateSize, c.actionCount, [], 1 << 30);
  expect([back.episode, back.firstStep, back.n]).toEqual([c.episode, c.firstStep, c.n]);
  expect(asBits(back.state)).toEqual(asBits(c.state));
  expect(asBits(back.q)).toEqual(asBits(c.q));
  expect(asBits(back.reward)).toEqual(asBits(c.reward));
  expect(Array.from(back.action)).toEqual(Array.from(c.action));
  expect(back.flags).toEqual(c.flags);
  expect(back.weights).toEqual(c.weights);
}

/** A balancing trolley pushed left and right by a fixed pattern, integrated as src/envs does it. */
function trolleyColumns(n: number): PackedColumns {
  let vars = [0.01, 0, 0.03, 0] as readonly number[];
  const rows: number[][] = [];
  for (let t = 0; t < n; t++) {
    rows.push([...vars]);
    const force = (t % 5 < 2 ? -1 : 1) * CART_POLE_PARAMS.force;
    vars = eulerStep(vars, cartPoleDerivatives(vars, force, CART_POLE_PARAMS), CART_POLE_PARAMS.tau);
  }
  return columns(n, 4, 2, (t) => ({ s: rows[t], q: [5 + rows[t][2], 5 - rows[t][2]], r: 0.1 * (1 - Math.abs(rows[t][2]) / 0.21) }));
}

describe('a packed block', () => {
  it('carries its place: episode, first step and rows', () => {
    const c = trolleyColumns(5);
    expect(decodePackedBySpec(encodePacked(c), 5, 4, 2).place).toEqual({ episode: 3, firstStep: 4096, n: 5 });
  });

  it('chooses Euler integration for the position and the angle of a cart-pole trajectory', () => {
    const c = trolleyColumns(200);
    const bytes = encodePacked(c);
    const { table } = decodePackedBySpec(bytes, c.n, 4, 2);
    // Position (channel 0) from velocity (channel 1), angle (channel 2) from angular velocity (channel 3), c = τ
    // (to the float32 rounding of the stored values, which the fit may match a hair better).
    expect(table.get(0)).toEqual([Predict.IntegratePrevious, 1, expect.closeTo(CART_POLE_PARAMS.tau, 8), expect.any(Number)]);
    expect(table.get(2)).toEqual([Predict.IntegratePrevious, 3, expect.closeTo(CART_POLE_PARAMS.tau, 8), expect.any(Number)]);
    // Their residuals are a few units in the last place: Rice parameters of 0 to 2.
    expect(table.get(0)![3]).toBeLessThanOrEqual(2);
    expect(table.get(2)![3]).toBeLessThanOrEqual(2);
    expectSameColumns(c, bytes);
    // 200 rows × 30 bytes raw; the velocities and Q still cost real bits, the positions almost none.
    expect(bytes.length).toBeLessThan(0.5 * 200 * 30);
  });

  it('reads the same by the SPEC alone as by the codec', () => {
    const c = trolleyColumns(77);
    const bytes = encodePacked(c);
    const spec = decodePackedBySpec(bytes, c.n, 4, 2);
    const state = new Uint32Array(c.n * 4);
    for (let d = 0; d < 4; d++) spec.channels.get(d)!.forEach((v, t) => (state[t * 4 + d] = v));
    expect(state).toEqual(asBits(c.state));
    expect(Uint32Array.from(spec.channels.get(6)!)).toEqual(asBits(c.reward));
  });

  it.each([1, 2, 3])('round-trips a block of %i rows', (n) => {
    const c = trolleyColumns(n);
    expectSameColumns(c, encodePacked(c));
  });

  it('round-trips seeded random blocks of every width, awkward patterns and all', () => {
    const random = seededRandom(2024);
    for (let trial = 0; trial < 40; trial++) {
      const n = 1 + Math.floor(random() * 300);
      const D = 1 + Math.floor(random() * 20);
      const A = 1 + Math.floor(random() * 5);
      const pick = () => {
        const u = random();
        if (u < 0.1) return new Float32Array(AWKWARD.buffer)[Math.floor(random() * AWKWARD.length)];
        if (u < 0.2) return random() * 1e30 - 5e29;
        return Math.sin(trial + random()) * 3;
      };
      const c = columns(n, D, A, () => ({ s: Array.from({ length: D }, pick), q: Array.from({ length: A }, pick), r: pick() }));
      // NaN payloads do not survive a trip through a JS number; put the awkward patterns in as bits.
      asBits(c.state).set(AWKWARD.subarray(0, Math.min(AWKWARD.length, c.state.length)));
      asBits(c.q).set(AWKWARD.subarray(0, Math.min(AWKWARD.length, c.q.length)));
      expectSameColumns(c, encodePacked(c));
    }
  });

  it('keeps weights runs: hex ids as 8 bytes, a target equal to the online id, empty and other ids', () => {
    const weights: WeightsRun[] = [
      [0, '', ''],
      [3, '0123456789abcdef', '0123456789abcdef'],
      [5, 'fedcba9876543210', '0123456789abcdef'],
      [9, 'not a hex id ✓', ''],
    ];
    const c = columns(12, 2, 2, (t) => ({ s: [t, -t], q: [1, 2], r: 0 }), weights);
    const bytes = encodePacked(c);
    expectSameColumns(c, bytes);
    expect(decodePackedBySpec(bytes, 12, 2, 2).weights).toEqual(weights);
  });

  it('keeps ε and the extras the block has, and leaves out those it has not', () => {
    const c = { ...trolleyColumns(20), epsilon: Float32Array.from({ length: 20 }, (_, t) => 1 - t / 1000) };
    c.extras = [null, Float32Array.from({ length: 20 }, (_, t) => t / 3)];
    const back = decodePacked(encodePacked(c), 4, 2, ['absent', 'present'], 1 << 30);
    expect(back.epsilon).toEqual(c.epsilon);
    expect(Object.keys(back.extras)).toEqual(['present']);
    expect(back.extras.present).toEqual(c.extras[1]);
  });
});

describe('a damaged packed block', () => {
  const c = trolleyColumns(40);
  const bytes = encodePacked(c);
  const decode = (b: Uint8Array) => () => decodePacked(b, 4, 2, [], 1 << 30);
  // Hand-made binaries for D = 2, A = 1 (channels 0–1 state, 2 Q, 3 reward, 4 action, 5 flags):
  // layout 1, episode 0, firstStep 0, N = 1, no runs, no ε or extras, then the channel table.
  const handMade = (...table: number[]) => () => decodePacked(Uint8Array.from([1, 0, 0, 1, 0, 0, ...table]), 2, 1, [], 1 << 20);

  it('names the channel whose codes end early when the binary is cut short', () => {
    expect(decode(bytes.subarray(0, bytes.length - 8))).toThrow(/step block \(packed\), channel \d+: bit stream ends early/);
  });

  it('refuses an unknown layout', () => {
    const b = bytes.slice();
    b[0] = 9;
    expect(decode(b)).toThrow('step block (packed): layout 9 is unknown (this reader knows 1)');
  });

  it('refuses a block that claims more rows than the file could hold', () => {
    expect(() => decodePacked(bytes, 4, 2, [], 1000)).toThrow(/need more memory than allowed/);
  });

  it('refuses a channel that reads a channel predicted from another, or an integer channel', () => {
    // Channel 0 beside channel 1 (4·33 = 132, ref 1) while channel 1 is beside channel 0.
    expect(handMade(132, 1, 132, 0, 0, 0, 0, 0)).toThrow('step block (packed), channel 0: refers to channel 1, which is not a float channel of this block predicted on its own');
    // Channel 2 (Q) beside channel 4 (the action).
    expect(handMade(0, 0, 132, 4, 0, 0, 0)).toThrow('step block (packed), channel 2: refers to channel 4, which is not a float channel of this block predicted on its own');
  });

  it('refuses an unknown predictor and a computed prediction of an integer channel', () => {
    expect(handMade(5 * 33)).toThrow('step block (packed), channel 0: predictor 5 is unknown');
    expect(handMade(0, 0, 0, 0, 33)).toThrow('step block (packed), channel 4: an integer channel is predicted only by its previous value');
  });

  it('refuses a channel table cut short', () => {
    expect(handMade(0, 0)).toThrow('step block (packed), channel 2: ends early');
  });
});

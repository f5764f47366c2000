/**
 * Channels and their predictors, for packed step blocks (SPEC.md §5.2). A channel is one value per row:
 * one state dimension, one action's Q, the reward, ε, an extra column (f32, handled as their 32
 * bits), or the action or the flags (unsigned integers). Each channel is coded as the residual between
 * every value and a prediction made from values a reader already has, so that smooth trajectories
 * cost a few bits a value instead of 32.
 *
 * The residual is the difference of the 32-bit patterns, taken modulo 2^32 and zigzag-mapped to an
 * unsigned number (small positive and negative differences become small numbers). It is lossless
 * for every bit pattern, NaN payloads and infinities included: a bad prediction only costs bits.
 *
 * Predictions that compute (linear, integrate) work in float64 and round once to float32; a NaN
 * result predicts the pattern 0x7FC00000, because the bits a NaN gets when stored are up to the
 * machine (ECMA-262 §6.1.6.1), and a reader on another engine must predict exactly the same bits.
 */

export const enum Predict {
  /** p_t = x_{t−1} (the bit pattern itself); p_0 = 0. */
  Previous = 0,
  /** p_t = f32(2·x_{t−1} − x_{t−2}); p_1 = x_0; p_0 = 0. */
  Linear = 1,
  /** p_t = f32(x_{t−1} + c·y_{t−1}); p_0 = 0. Euler's step: position from the last velocity. */
  IntegratePrevious = 2,
  /** p_t = f32(x_{t−1} + c·y_t); p_0 = 0. The semi-implicit step: position from the new velocity. */
  IntegrateCurrent = 3,
  /** p_t = y_t (the bit pattern itself): the Q of a neighbouring action. */
  Beside = 4,
}

export interface Predictor {
  kind: Predict;
  /** The channel y, for the kinds that read another channel. */
  ref: number;
  /** The coefficient c of the integrating kinds. */
  c: number;
}

export const PREDICT_KINDS = 5;

export function hasRef(kind: Predict): boolean {
  return kind >= Predict.IntegratePrevious;
}

export function hasCoefficient(kind: Predict): boolean {
  return kind === Predict.IntegratePrevious || kind === Predict.IntegrateCurrent;
}

const F = new Float32Array(1);
const U = new Uint32Array(F.buffer);
const NAN_BITS = 0x7fc00000;

/** The f32 bit pattern nearest to a float64, with one fixed pattern for every NaN. */
function f32Bits(v: number): number {
  if (v !== v) return NAN_BITS;
  F[0] = v;
  return U[0];
}

/** The residual of a pattern against a prediction of 0. */
export function zigzagOfPattern(v: number): number {
  return zigzag(v | 0);
}

function zigzag(d: number): number {
  return ((d << 1) ^ (d >> 31)) >>> 0;
}

function unzigzag(z: number): number {
  return (z >>> 1) ^ -(z & 1);
}

/**
 * The prediction of row t, as a bit pattern. `x` holds the channel's own bits (rows before t are
 * final), `xf` the same bits as float32; `y`/`yf` the reference channel, complete.
 */
function predictAt(p: Predictor, t: number, x: Uint32Array, xf: Float32Array, y: Uint32Array | null, yf: Float32Array | null): number {
  switch (p.kind) {
    case Predict.Previous:
      return t > 0 ? x[t - 1] : 0;
    case Predict.Linear:
      return t > 1 ? f32Bits(2 * xf[t - 1] - xf[t - 2]) : t > 0 ? x[t - 1] : 0;
    case Predict.IntegratePrevious:
      return t > 0 ? f32Bits(xf[t - 1] + p.c * yf![t - 1]) : 0;
    case Predict.IntegrateCurrent:
      return t > 0 ? f32Bits(xf[t - 1] + p.c * yf![t]) : 0;
    case Predict.Beside:
      return y![t];
  }
}

/** Residuals of rows 0 … rows−1 of channel x under a predictor, into `out`. */
export function residuals(p: Predictor, x: Uint32Array, y: Uint32Array | null, rows: number, out: Uint32Array): void {
  const xf = new Float32Array(x.buffer, x.byteOffset, x.length);
  const yf = y ? new Float32Array(y.buffer, y.byteOffset, y.length) : null;
  // The common kinds get their own loops: this runs for every channel of every block written.
  if (p.kind === Predict.Previous) {
    let prev = 0;
    for (let t = 0; t < rows; t++) {
      out[t] = zigzag((x[t] - prev) | 0);
      prev = x[t];
    }
    return;
  }
  for (let t = 0; t < rows; t++) out[t] = zigzag((x[t] - predictAt(p, t, x, xf, y, yf)) | 0);
}

/** The inverse of `residuals`: fills channel x row by row from its residuals (y must be complete). */
export function reconstruct(p: Predictor, r: Uint32Array, y: Uint32Array | null, x: Uint32Array): void {
  const xf = new Float32Array(x.buffer, x.byteOffset, x.length);
  const yf = y ? new Float32Array(y.buffer, y.byteOffset, y.length) : null;
  const n = x.length;
  if (p.kind === Predict.Previous) {
    let prev = 0;
    for (let t = 0; t < n; t++) prev = x[t] = (prev + unzigzag(r[t])) >>> 0;
    return;
  }
  for (let t = 0; t < n; t++) x[t] = (predictAt(p, t, x, xf, y, yf) + unzigzag(r[t])) >>> 0;
}

/** What a residual sequence will roughly cost: the sum of its significant bits. */
export function bitCost(r: Uint32Array, rows: number): number {
  let c = 0;
  for (let t = 0; t < rows; t++) c += 32 - Math.clz32(r[t]);
  return c;
}

/** Candidate coefficients for an integrating predictor: the least-squares fit and its rounded forms. */
export function coefficientCandidates(x: Uint32Array, y: Uint32Array, rows: number, lag: 0 | 1): number[] {
  const xf = new Float32Array(x.buffer, x.byteOffset, x.length);
  const yf = new Float32Array(y.buffer, y.byteOffset, y.length);
  let sxy = 0;
  let syy = 0;
  for (let t = 1; t < rows; t++) {
    const dx = xf[t] - xf[t - 1];
    const yy = yf[t - lag];
    sxy += dx * yy;
    syy += yy * yy;
  }
  const c = sxy / syy;
  if (!Number.isFinite(c) || c === 0) return [];
  // A time step written by a person (0.02, 1) is found exactly by rounding the fit, and then the
  // prediction is right to the last bit.
  // Fewest digits first, so that a tie goes to the round number; stored as float32, so rounded to it.
  const out = new Set<number>();
  for (let digits = 1; digits <= 7; digits++) out.add(Math.fround(Number(c.toPrecision(digits))));
  out.add(Math.fround(c));
  return [...out].filter((v) => Number.isFinite(v) && v !== 0);
}

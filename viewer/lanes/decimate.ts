/**
 * Decimation for the Lanes: reduce a long series to what a pixel column can show.
 *
 * Pure functions over typed arrays; nothing here allocates per point, so a redraw costs one pass
 * over the visible steps and the drawing costs a handful of points per pixel column.
 *
 * - `m4`   — first, last, min and max per pixel column (Jugel et al. 2014, PVLDB 7(10), "M4: a
 *            visualization-oriented time series data aggregation"). A line through those four
 *            points per column draws the same pixels as the line through every point.
 * - `lttb` — Largest-Triangle-Three-Buckets (Steinarsson 2013), for a fixed point budget; it lives
 *            in `lttb.ts` and is re-exported here.
 */

export { lttb } from './lttb.ts';

// ---------------------------------------------------------------------------------------------
// Column convention (pinned; the drawer, the hover and the tests rely on it)
//
// For steps [from, to) split into C columns, with len = to − from:
//     step s lies in column  c = floor((s − from) · C / len)
//     column c holds steps   [from + ceil(c · len / C), from + ceil((c + 1) · len / C))
// So every column holds ⌊len/C⌋ or ⌈len/C⌉ steps, the first column starts at `from`, the last ends
// at `to`, and when C > len some columns are empty (count 0).
// ---------------------------------------------------------------------------------------------

/** Column whose steps include `step` (the pinned convention above). */
export function columnOf(step: number, from: number, to: number, columns: number): number {
  return Math.floor(((step - from) * columns) / (to - from));
}

/** First step of column `c`; `columnStart(C, …)` is `to`. */
export function columnStart(c: number, from: number, to: number, columns: number): number {
  return from + Math.ceil((c * (to - from)) / columns);
}

/** Flag bits in `M4Result.flags`: which kinds of non-finite value a column holds. */
export const HAS_NAN = 1;
export const HAS_POS_INF = 2;
export const HAS_NEG_INF = 4;

/**
 * Bits in `M4Result.breaks`: where a non-finite value sits between the column's polyline points,
 * so the drawer lifts the pen there instead of drawing a line through a value that is not a number.
 * GAP_0..GAP_2: between point i and point i+1 of the column.
 */
export const BREAK_BEFORE = 1;
export const BREAK_AFTER = 2;
export const BREAK_GAP_0 = 4;
export const BREAK_GAP_1 = 8;
export const BREAK_GAP_2 = 16;
const BREAK_GAPS = BREAK_GAP_0 | BREAK_GAP_1 | BREAK_GAP_2;

/** Per-column output of `m4`. Arrays are sized for `capacity` columns; `columns` are in use. */
export interface M4Result {
  columns: number;
  readonly capacity: number;
  /** The step range the columns cover. */
  from: number;
  to: number;
  /** Steps in the column, finite or not. */
  readonly count: Uint32Array;
  /** Finite values in the column; the eight arrays below describe only these. */
  readonly finiteCount: Uint32Array;
  /** Step indices, −1 when the column has no finite value. */
  readonly firstIndex: Int32Array;
  readonly lastIndex: Int32Array;
  readonly minIndex: Int32Array;
  readonly maxIndex: Int32Array;
  /** Values, NaN when the column has no finite value. */
  readonly first: Float64Array;
  readonly last: Float64Array;
  readonly min: Float64Array;
  readonly max: Float64Array;
  /** HAS_NAN | HAS_POS_INF | HAS_NEG_INF. */
  readonly flags: Uint8Array;
  readonly nanCount: Uint32Array;
  readonly posInfCount: Uint32Array;
  readonly negInfCount: Uint32Array;
  /**
   * The polyline to draw through column c: `pointCount[c]` (0–4) points at
   * `pointIndex/pointValue[4c … 4c + pointCount[c])`, in step order. With at most 4 finite values
   * these are exactly the column's finite values; otherwise first, min and max in step order, last.
   */
  readonly pointCount: Uint8Array;
  readonly pointIndex: Int32Array;
  readonly pointValue: Float64Array;
  /** BREAK_* bits. */
  readonly breaks: Uint8Array;
}

/** Buffers for `columns` columns; pass them back to `m4` to decimate again without allocating. */
export function createM4(capacity: number): M4Result {
  const cap = Math.max(0, capacity | 0);
  return {
    columns: 0,
    capacity: cap,
    from: 0,
    to: 0,
    count: new Uint32Array(cap),
    finiteCount: new Uint32Array(cap),
    firstIndex: new Int32Array(cap),
    lastIndex: new Int32Array(cap),
    minIndex: new Int32Array(cap),
    maxIndex: new Int32Array(cap),
    first: new Float64Array(cap),
    last: new Float64Array(cap),
    min: new Float64Array(cap),
    max: new Float64Array(cap),
    flags: new Uint8Array(cap),
    nanCount: new Uint32Array(cap),
    posInfCount: new Uint32Array(cap),
    negInfCount: new Uint32Array(cap),
    pointCount: new Uint8Array(cap),
    pointIndex: new Int32Array(4 * cap),
    pointValue: new Float64Array(4 * cap),
    breaks: new Uint8Array(cap),
  };
}

/** Any typed array (or plain array) of numbers; the Lanes pass Float32Array or Float64Array. */
export type Values = ArrayLike<number>;

/**
 * M4 (Jugel et al. 2014) of steps [from, to) of a series stored at `values[offset + step·stride]`
 * (a Q table stored row-major N×A is action a at stride A, offset a), into `columns` columns.
 *
 * Non-finite values are not folded into min/max: they are counted per column and flagged, and they
 * break the polyline, so the lane can mark exactly where they are. One pass; no allocation unless
 * `out` is missing or too small.
 */
export function m4(
  values: Values,
  stride: number,
  offset: number,
  from: number,
  to: number,
  columns: number,
  out?: M4Result,
): M4Result {
  if (!Number.isInteger(stride) || stride < 1) throw new RangeError(`m4: stride must be an integer ≥ 1, got ${stride}`);
  if (!Number.isInteger(offset) || offset < 0 || offset >= stride)
    throw new RangeError(`m4: offset must be an integer in [0, stride = ${stride}), got ${offset}`);
  if (!Number.isInteger(from) || !Number.isInteger(to) || from < 0 || to < from)
    throw new RangeError(`m4: expected integer steps 0 ≤ from ≤ to, got from = ${from}, to = ${to}`);
  if (!Number.isInteger(columns) || columns < 0) throw new RangeError(`m4: columns must be an integer ≥ 0, got ${columns}`);
  if (to > from && offset + (to - 1) * stride >= values.length)
    throw new RangeError(
      `m4: step ${to - 1} at stride ${stride}, offset ${offset} needs index ${offset + (to - 1) * stride}, but the series holds ${values.length} values`,
    );
  const r = out && out.capacity >= columns ? out : createM4(columns);
  r.columns = columns;
  r.from = from;
  r.to = to;
  const len = to - from;
  const { count, finiteCount, firstIndex, lastIndex, minIndex, maxIndex, first, last, min, max } = r;
  const { flags, nanCount, posInfCount, negInfCount, pointCount, pointIndex, pointValue, breaks } = r;

  let start = from;
  for (let c = 0; c < columns; c++) {
    const end = len === 0 ? from : from + Math.ceil(((c + 1) * len) / columns);
    count[c] = end - start;
    if (end - start <= 4) {
      exactColumn(values, stride, offset, start, end, r, c);
      start = end;
      continue;
    }
    // Three tight loops instead of one with many branches: find the first finite value, then the
    // last (from the end), then fold min/max over what lies between. Every step is read once.
    let nNan = 0, nPos = 0, nNeg = 0;
    let s = start, i = offset + start * stride;
    for (; s < end; s++, i += stride) {
      const v = values[i];
      if (v - v === 0) break; // finite: v − v is NaN for NaN and ±∞
      if (v !== v) nNan++;
      else if (v > 0) nPos++;
      else nNeg++;
    }
    if (s === end) {
      // No finite value: nothing to draw, and the line must not bridge the column.
      finiteCount[c] = 0;
      firstIndex[c] = lastIndex[c] = minIndex[c] = maxIndex[c] = -1;
      first[c] = last[c] = min[c] = max[c] = NaN;
      pointCount[c] = 0;
      breaks[c] = BREAK_BEFORE | BREAK_AFTER;
    } else {
      const fi = s, fv = values[i];
      let brk = fi > start ? BREAK_BEFORE : 0;
      let e = end - 1, j = offset + e * stride;
      for (; e > fi; e--, j -= stride) {
        const v = values[j];
        if (v - v === 0) break;
        if (v !== v) nNan++;
        else if (v > 0) nPos++;
        else nNeg++;
      }
      const li = e, lv = values[j];
      if (li < end - 1) brk |= BREAK_AFTER;
      let minv = fv, maxv = fv, mini = fi, maxi = fi, inner = 0;
      for (s = fi + 1, i += stride; s < li; s++, i += stride) {
        const v = values[i];
        if (v - v === 0) {
          // Strict comparisons: on ties the earliest step wins.
          if (v < minv) { minv = v; mini = s; }
          else if (v > maxv) { maxv = v; maxi = s; }
        } else {
          inner++;
          if (v !== v) nNan++;
          else if (v > 0) nPos++;
          else nNeg++;
        }
      }
      if (li > fi) {
        if (lv < minv) { minv = lv; mini = li; }
        else if (lv > maxv) { maxv = lv; maxi = li; }
      }
      const k = li - fi + 1 - inner;
      if (k <= 4) {
        // Few finite values among many non-finite ones: a second pass over this column keeps them
        // all, exactly, with the breaks between them. Rare (a column mostly non-finite).
        exactColumn(values, stride, offset, start, end, r, c);
        start = end;
        continue;
      }
      const base = 4 * c;
      let p = 0;
      pointIndex[base] = fi; pointValue[base] = fv; p = 1;
      const lo = mini < maxi ? mini : maxi, hi = mini < maxi ? maxi : mini;
      const lov = mini < maxi ? minv : maxv, hiv = mini < maxi ? maxv : minv;
      if (lo !== fi) { pointIndex[base + p] = lo; pointValue[base + p] = lov; p++; }
      if (hi !== lo && hi !== li) { pointIndex[base + p] = hi; pointValue[base + p] = hiv; p++; }
      if (li !== fi) { pointIndex[base + p] = li; pointValue[base + p] = lv; p++; }
      pointCount[c] = p;
      // A column with more than four values spans at most a pixel when columns are pixels, so a
      // non-finite value anywhere inside breaks all of its inner segments.
      if (inner > 0) brk |= BREAK_GAPS;
      breaks[c] = brk;
      finiteCount[c] = k;
      firstIndex[c] = fi; lastIndex[c] = li; minIndex[c] = mini; maxIndex[c] = maxi;
      first[c] = fv; last[c] = lv; min[c] = minv; max[c] = maxv;
    }
    nanCount[c] = nNan; posInfCount[c] = nPos; negInfCount[c] = nNeg;
    flags[c] = (nNan > 0 ? HAS_NAN : 0) | (nPos > 0 ? HAS_POS_INF : 0) | (nNeg > 0 ? HAS_NEG_INF : 0);
    start = end;
  }
  return r;
}

/** Column c from its every finite value (at most four are kept as points; more only when rescanning). */
function exactColumn(values: Values, stride: number, offset: number, start: number, end: number, r: M4Result, c: number) {
  let fi = -1, li = -1, mini = -1, maxi = -1;
  let fv = NaN, lv = NaN, minv = Infinity, maxv = -Infinity;
  let k = 0, nNan = 0, nPos = 0, nNeg = 0, brk = 0;
  // A non-finite value was seen since the last finite one: the next finite value starts a new run.
  let pendingBad = false;
  const base = 4 * c;
  for (let s = start, i = offset + start * stride; s < end; s++, i += stride) {
    const v = values[i];
    if (v - v === 0) {
      if (k < 4) {
        r.pointIndex[base + k] = s;
        r.pointValue[base + k] = v;
        if (pendingBad) brk |= k === 0 ? BREAK_BEFORE : BREAK_GAP_0 << (k - 1);
      }
      pendingBad = false;
      if (k === 0) { fi = s; fv = v; }
      if (v < minv) { minv = v; mini = s; }
      if (v > maxv) { maxv = v; maxi = s; }
      li = s; lv = v;
      k++;
    } else {
      pendingBad = true;
      if (v !== v) nNan++;
      else if (v > 0) nPos++;
      else nNeg++;
    }
  }
  if (pendingBad) brk |= k > 0 ? BREAK_AFTER : BREAK_BEFORE | BREAK_AFTER;
  r.pointCount[c] = Math.min(k, 4);
  r.breaks[c] = brk;
  r.finiteCount[c] = k;
  r.firstIndex[c] = fi; r.lastIndex[c] = li; r.minIndex[c] = mini; r.maxIndex[c] = maxi;
  r.first[c] = fv; r.last[c] = lv;
  r.min[c] = k > 0 ? minv : NaN;
  r.max[c] = k > 0 ? maxv : NaN;
  r.nanCount[c] = nNan; r.posInfCount[c] = nPos; r.negInfCount[c] = nNeg;
  r.flags[c] = (nNan > 0 ? HAS_NAN : 0) | (nPos > 0 ? HAS_POS_INF : 0) | (nNeg > 0 ? HAS_NEG_INF : 0);
}

import { describe, expect, it } from 'vitest';
import {
  BREAK_AFTER, BREAK_BEFORE, BREAK_GAP_0, BREAK_GAP_1, BREAK_GAP_2, HAS_NAN, HAS_NEG_INF, HAS_POS_INF,
  columnOf, columnStart, createM4, lttb, m4, type M4Result,
} from '../../viewer/lanes/decimate.ts';
import { seededRandom } from '../formats/seeded-bytes.ts';

/** Small seeded generator (mulberry32), so a failure can be replayed. */
const generator = seededRandom;

/** The reference: every step folded into its column by the pinned convention, one at a time. */
function bruteForce(values: ArrayLike<number>, stride: number, offset: number, from: number, to: number, columns: number) {
  const cols = Array.from({ length: columns }, () => ({
    count: 0, finite: [] as { i: number; v: number }[], bad: [] as number[], nan: 0, pos: 0, neg: 0,
  }));
  for (let s = from; s < to; s++) {
    const c = Math.floor(((s - from) * columns) / (to - from));
    const v = values[offset + s * stride];
    const col = cols[c];
    col.count++;
    if (!Number.isFinite(v)) col.bad.push(s);
    if (Number.isNaN(v)) col.nan++;
    else if (v === Infinity) col.pos++;
    else if (v === -Infinity) col.neg++;
    else col.finite.push({ i: s, v });
  }
  return cols.map((col) => {
    const f = col.finite;
    let min = f[0], max = f[0];
    for (const p of f) {
      if (p.v < min.v) min = p; // strict: the earliest step wins a tie
      if (p.v > max.v) max = p;
    }
    const points = f.length <= 4 ? f : [...new Map([f[0], min, max, f[f.length - 1]].map((p) => [p.i, p])).values()].sort((a, b) => a.i - b.i);
    // Pen lifts: before the first point, after the last, and between kept points i and i + 1 —
    // exactly for at most four finite values; above that (a column within one pixel) all inner
    // segments lift when any non-finite value lies inside.
    const badIn = (a: number, b: number) => col.bad.some((s) => s > a && s < b);
    let breaks = 0;
    if (f.length === 0) breaks = col.bad.length ? BREAK_BEFORE | BREAK_AFTER : 0;
    else {
      if (badIn(-Infinity, f[0].i)) breaks |= BREAK_BEFORE;
      if (badIn(f[f.length - 1].i, Infinity)) breaks |= BREAK_AFTER;
      if (f.length <= 4) for (let p = 0; p + 1 < f.length; p++) { if (badIn(f[p].i, f[p + 1].i)) breaks |= BREAK_GAP_0 << p; }
      else if (badIn(f[0].i, f[f.length - 1].i)) breaks |= BREAK_GAP_0 | BREAK_GAP_1 | BREAK_GAP_2;
    }
    return { ...col, min, max, first: f[0], last: f[f.length - 1], points, breaks };
  });
}

/** m4's output and the brute force, column by column, as comparable records. */
function expectMatches(r: M4Result, ref: ReturnType<typeof bruteForce>) {
  expect(r.columns).toBe(ref.length);
  const got = ref.map((_, c) => ({
    column: c,
    count: r.count[c],
    finite: r.finiteCount[c],
    nonFinite: [r.nanCount[c], r.posInfCount[c], r.negInfCount[c]],
    flags: r.flags[c],
    indices: [r.firstIndex[c], r.lastIndex[c], r.minIndex[c], r.maxIndex[c]],
    // NaN (no finite value) as null, so toEqual compares it plainly.
    values: [r.first[c], r.last[c], r.min[c], r.max[c]].map((v) => (Number.isNaN(v) ? null : v)),
    points: Array.from({ length: r.pointCount[c] }, (_, p) => ({ i: r.pointIndex[4 * c + p], v: r.pointValue[4 * c + p] })),
    breaks: r.breaks[c],
  }));
  const want = ref.map((col, c) => {
    const some = col.finite.length > 0;
    return {
      column: c,
      count: col.count,
      finite: col.finite.length,
      nonFinite: [col.nan, col.pos, col.neg],
      flags: (col.nan ? HAS_NAN : 0) | (col.pos ? HAS_POS_INF : 0) | (col.neg ? HAS_NEG_INF : 0),
      indices: some ? [col.first.i, col.last.i, col.min.i, col.max.i] : [-1, -1, -1, -1],
      values: some ? [col.first.v, col.last.v, col.min.v, col.max.v] : [null, null, null, null],
      points: col.points,
      breaks: col.breaks,
    };
  });
  // Deep-equal on thousands of records is slow; find the first differing column, then show it.
  const bad = got.findIndex((g, c) => JSON.stringify(g) !== JSON.stringify(want[c]));
  expect(bad < 0 ? null : got[bad]).toEqual(bad < 0 ? null : want[bad]);
}

describe('lttb', () => {
  // Check values from REFERENCES.md (Diagnostics), mainline bucket convention of
  // Steinarsson (2013), "Downsampling time series for visual representation", Univ. of Iceland.
  const xs = Float64Array.from({ length: 10 }, (_, i) => i + 1);
  const ys = Float64Array.of(10, 20, 15, 30, 40, 35, 50, 60, 55, 70);
  const kept = (k: number) => Array.from(lttb(xs, ys, k), (i) => [xs[i], ys[i]]);

  it('Steinarsson (2013), k = 4 → (1,10), (3,15), (9,55), (10,70)', () => {
    expect(kept(4)).toEqual([[1, 10], [3, 15], [9, 55], [10, 70]]);
  });

  it('Steinarsson (2013), k = 5 → (1,10), (3,15), (5,40), (9,55), (10,70)', () => {
    expect(kept(5)).toEqual([[1, 10], [3, 15], [5, 40], [9, 55], [10, 70]]);
  });

  it('returns indices, and pins its edges: k ≥ N or 0 keeps all, k = 1 or 2 keeps the ends', () => {
    expect(lttb(xs, ys, 4)).toBeInstanceOf(Uint32Array);
    expect(Array.from(lttb(xs, ys, 10))).toEqual([0, 1, 2, 3, 4, 5, 6, 7, 8, 9]);
    expect(Array.from(lttb(xs, ys, 0))).toEqual([0, 1, 2, 3, 4, 5, 6, 7, 8, 9]);
    expect(Array.from(lttb(xs, ys, 2))).toEqual([0, 9]);
    expect(Array.from(lttb(xs, ys, 1))).toEqual([0, 9]);
    expect(Array.from(lttb([], [], 3))).toEqual([]);
    expect(() => lttb(xs, ys.subarray(1), 4)).toThrow(/xs holds 10 values but ys holds 9/);
  });

  it('keeps the requested number of ascending indices on a long series', () => {
    const random = generator(7);
    const n = 100_000;
    const x = Float64Array.from({ length: n }, (_, i) => i);
    const y = Float32Array.from({ length: n }, () => random());
    const idx = lttb(x, y, 500);
    expect(idx.length).toBe(500);
    expect(idx[0]).toBe(0);
    expect(idx[499]).toBe(n - 1);
    for (let i = 1; i < idx.length; i++) expect(idx[i]).toBeGreaterThan(idx[i - 1]);
  });
});

describe('m4 column convention', () => {
  it.each([[10_007, 97], [100, 100], [7, 3], [3, 8], [1, 1], [1000, 1]])('steps %i into %i columns: columnStart and columnOf agree', (len, columns) => {
    const from = 13, to = 13 + len;
    expect(columnStart(0, from, to, columns)).toBe(from);
    expect(columnStart(columns, from, to, columns)).toBe(to);
    const wrong: number[] = [];
    for (let c = 0; c < columns; c++)
      for (let s = columnStart(c, from, to, columns); s < columnStart(c + 1, from, to, columns); s++) if (columnOf(s, from, to, columns) !== c) wrong.push(s);
    expect(wrong).toEqual([]);
  });
});

describe('m4 (Jugel et al. 2014)', () => {
  function randomSeries(n: number, stride: number, seed: number, nonFinite = 0) {
    const random = generator(seed);
    const values = new Float64Array(n * stride);
    for (let i = 0; i < values.length; i++) {
      const u = random();
      // Repeated values make ties, which the brute force and m4 must settle the same way.
      values[i] = u < nonFinite ? [NaN, Infinity, -Infinity][Math.floor(random() * 3)] : Math.round((random() - 0.5) * 200) / 4;
    }
    return values;
  }

  it('matches a brute-force first/last/min/max per column: 10,007 points into 97 columns', () => {
    const values = randomSeries(10_007, 1, 1);
    expectMatches(m4(values, 1, 0, 0, 10_007, 97), bruteForce(values, 1, 0, 0, 10_007, 97));
  });

  it('matches the brute force with a stride (Q row-major N×A: stride A, offset a) and a sub-range', () => {
    const values = randomSeries(10_007, 3, 2);
    for (const offset of [0, 1, 2]) expectMatches(m4(values, 3, offset, 0, 10_007, 97), bruteForce(values, 3, offset, 0, 10_007, 97));
    expectMatches(m4(values, 3, 2, 123, 9001, 97), bruteForce(values, 3, 2, 123, 9001, 97));
    expectMatches(m4(Float32Array.from(values), 3, 1, 5, 10_000, 640), bruteForce(Float32Array.from(values), 3, 1, 5, 10_000, 640));
  });

  it('matches the brute force where non-finite values are common, in every column shape', () => {
    const values = randomSeries(10_007, 2, 3, 0.3);
    for (const columns of [97, 2000, 4000, 12_000]) expectMatches(m4(values, 2, 1, 0, 10_007, columns), bruteForce(values, 2, 1, 0, 10_007, columns));
  });

  it('is exact when a column holds at most 4 points: every point is kept, in step order', () => {
    // [0, 5, 3, 10] per column: first is the min and last the max, so plain M4 would drop 5 and 3.
    const values = Float64Array.from({ length: 40 }, (_, i) => [0, 5, 3, 10][i % 4] + i);
    for (const columns of [10, 14, 20, 40]) {
      const r = m4(values, 1, 0, 0, 40, columns);
      const kept: number[] = [];
      for (let c = 0; c < columns; c++) for (let p = 0; p < r.pointCount[c]; p++) kept.push(r.pointIndex[4 * c + p]);
      expect(kept).toEqual(Array.from({ length: 40 }, (_, i) => i));
    }
    // Six steps of which two are NaN leave four finite values: those four, exactly.
    const mixed = Float64Array.of(1, NaN, 7, 2, NaN, 9);
    const r = m4(mixed, 1, 0, 0, 6, 1);
    expect(Array.from(r.pointIndex.subarray(0, r.pointCount[0]))).toEqual([0, 2, 3, 5]);
    expect(Array.from(r.pointValue.subarray(0, r.pointCount[0]))).toEqual([1, 7, 2, 9]);
  });

  it('flags a NaN in column 3 in column 3 only, and keeps it out of min/max', () => {
    const values = Float64Array.from({ length: 100 }, (_, i) => i); // 10 columns of 10 steps
    values[34] = NaN;
    values[71] = Infinity;
    values[72] = Infinity;
    values[99] = -Infinity;
    const r = m4(values, 1, 0, 0, 100, 10);
    expect(Array.from(r.flags)).toEqual([0, 0, 0, HAS_NAN, 0, 0, 0, HAS_POS_INF, 0, HAS_NEG_INF]);
    expect([r.nanCount[3], r.posInfCount[7], r.negInfCount[9]]).toEqual([1, 2, 1]);
    expect([r.min[3], r.max[3], r.finiteCount[3], r.count[3]]).toEqual([30, 39, 9, 10]);
    expect([r.min[7], r.max[7]]).toEqual([70, 79]);
    expect([r.max[9], r.lastIndex[9], r.last[9]]).toEqual([98, 98, 98]);
    // The line lifts across each non-finite value instead of bridging it.
    expect(r.breaks[9] & BREAK_AFTER).toBe(BREAK_AFTER);
    expect(r.breaks[0]).toBe(0);
  });

  it('breaks the polyline exactly where non-finite values sit between kept points', () => {
    const r = m4(Float64Array.of(NaN, 1, 2, Infinity, 3, 4, 5, 6), 1, 0, 0, 8, 2);
    expect(r.breaks[0]).toBe(BREAK_BEFORE | BREAK_AFTER); // NaN before 1, and ∞ after 2 ends column 0
    expect(r.breaks[1]).toBe(0);
    const r2 = m4(Float64Array.of(1, 2, NaN, 3), 1, 0, 0, 4, 1);
    expect(r2.breaks[0]).toBe(BREAK_GAP_1); // between the 2nd and 3rd kept point
    const allBad = m4(Float64Array.of(1, NaN, NaN, NaN, NaN, NaN, 2), 1, 0, 0, 7, 3);
    expect(allBad.pointCount[1]).toBe(0);
    expect(allBad.breaks[1]).toBe(BREAK_BEFORE | BREAK_AFTER);
  });

  it('handles one point in one column, an empty range, more columns than steps, and zero columns', () => {
    const one = m4(Float32Array.of(2.5), 1, 0, 0, 1, 1);
    expect([one.count[0], one.first[0], one.last[0], one.min[0], one.max[0], one.pointCount[0]]).toEqual([1, 2.5, 2.5, 2.5, 2.5, 1]);
    const empty = m4(Float64Array.of(1, 2, 3), 1, 0, 1, 1, 4);
    expect(Array.from(empty.count)).toEqual([0, 0, 0, 0]);
    expect(Array.from(empty.firstIndex)).toEqual([-1, -1, -1, -1]);
    expect(Array.from(empty.pointCount)).toEqual([0, 0, 0, 0]);
    const sparse = m4(Float64Array.of(4, 5, 6), 1, 0, 0, 3, 8);
    // Step s goes to column ⌊s·8/3⌋: 0, 2, 5.
    expect(Array.from(sparse.count)).toEqual([1, 0, 1, 0, 0, 1, 0, 0]);
    expect(Array.from(sparse.firstIndex)).toEqual([0, -1, 1, -1, -1, 2, -1, -1]);
    expect(m4(new Float64Array(0), 1, 0, 0, 0, 0).columns).toBe(0);
  });

  it('reuses a buffer without leaking the previous result', () => {
    const a = randomSeries(5000, 1, 4, 0.05), b = randomSeries(3000, 1, 5, 0.2);
    const buffer = createM4(300);
    m4(a, 1, 0, 0, 5000, 300, buffer);
    const again = m4(b, 1, 0, 0, 3000, 211, buffer);
    expect(again).toBe(buffer);
    expectMatches(again, bruteForce(b, 1, 0, 0, 3000, 211));
    expect(m4(b, 1, 0, 0, 3000, 400, buffer)).not.toBe(buffer); // too small: a fresh one
  });

  it('names what was wrong with its arguments', () => {
    const v = new Float64Array(10);
    expect(() => m4(v, 0, 0, 0, 10, 2)).toThrow(/stride must be an integer ≥ 1, got 0/);
    expect(() => m4(v, 2, 2, 0, 5, 2)).toThrow(/offset must be an integer in \[0, stride = 2\), got 2/);
    expect(() => m4(v, 1, 0, 5, 4, 2)).toThrow(/0 ≤ from ≤ to, got from = 5, to = 4/);
    expect(() => m4(v, 2, 1, 0, 6, 2)).toThrow(/step 5 at stride 2, offset 1 needs index 11, but the series holds 10 values/);
  });
});

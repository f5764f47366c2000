/**
 * The Lanes' scales: y range and ticks of one lane, and the shared time axis (step ↔ pixel, zoom,
 * pan). Pure arithmetic, so the component only wires events to it and the tests can pin it.
 *
 * Time axis convention: a view {from, to} shows the step interval [from, to) across the plot's
 * width; step s occupies the slot [s, s + 1), so the full episode is {0, n}, a series point for
 * step s is drawn at the slot's centre s + ½, and the step under pixel x is ⌊xToStep(x)⌋.
 */
import type { M4Result } from './decimate.ts';

/** Visible step interval, in steps (fractional when zoomed between steps). */
export interface ViewRange {
  from: number;
  to: number;
}

export interface YRange {
  lo: number;
  hi: number;
}

/** The fewest steps a view may span: zooming further would only spread four points wider. */
export const MIN_SPAN = 4;

// ---------------------------------------------------------------------------------------------
// y: range and ticks

/** Smallest and largest finite value over the columns of the given decimations; null if none. */
export function finiteExtent(decimated: readonly M4Result[]): YRange | null {
  let lo = Infinity, hi = -Infinity;
  for (const d of decimated) {
    for (let c = 0; c < d.columns; c++) {
      // min/max hold only finite values (NaN for a column without any), so NaN fails both tests.
      const a = d.min[c], b = d.max[c];
      if (a < lo) lo = a;
      if (b > hi) hi = b;
    }
  }
  return lo <= hi ? { lo, hi } : null;
}

/**
 * The lane's y range: the finite extent padded by `pad` of its span on each side. A flat series
 * (lo = hi = v) gets [v − d, v + d] with d = 10% of |v|, or 1 at v = 0, so the line sits mid-lane
 * rather than on an edge. No finite value at all: [−1, 1], a neutral frame for the non-finite marks.
 */
export function laneYRange(extent: YRange | null, pad = 0.05): YRange {
  if (!extent) return { lo: -1, hi: 1 };
  const { lo, hi } = extent;
  const span = hi - lo;
  if (span === 0) {
    const d = Math.abs(lo) * 0.1 || 1;
    return { lo: lo - d, hi: hi + d };
  }
  // Values near ±1.8e308 (float64 blow-ups) would pad to ±∞; keep the frame finite.
  if (!Number.isFinite(span)) return { lo: -Number.MAX_VALUE, hi: Number.MAX_VALUE };
  return { lo: Math.max(-Number.MAX_VALUE, lo - span * pad), hi: Math.min(Number.MAX_VALUE, hi + span * pad) };
}

export interface Ticks {
  /** Distance between ticks: 1, 2 or 5 × 10^exponent. */
  spacing: number;
  mantissa: 1 | 2 | 5;
  exponent: number;
  /** Tick values inside [lo, hi], ascending. */
  values: number[];
}

/**
 * "Nice" ticks: the smallest spacing of the form 1, 2 or 5 × 10^k that puts at most about
 * `maxTicks` intervals in [lo, hi]. Values are computed as i·m·10^k from the integer i (not by
 * repeated addition), so 0.6 is 0.6 and not 0.6000000000000001.
 */
export function niceTicks(lo: number, hi: number, maxTicks = 5): Ticks {
  if (!(hi > lo) || !Number.isFinite(hi - lo) || !(maxTicks >= 1))
    return { spacing: NaN, mantissa: 1, exponent: 0, values: Number.isFinite(lo) && lo === hi ? [lo] : [] };
  const raw = (hi - lo) / maxTicks;
  let exponent = Math.floor(Math.log10(raw));
  // log10 can land a hair below an integer for exact powers of ten; correct by one either way.
  if (10 ** (exponent + 1) <= raw) exponent++;
  else if (10 ** exponent > raw) exponent--;
  const norm = raw / 10 ** exponent;
  let mantissa: 1 | 2 | 5;
  if (norm <= 1) mantissa = 1;
  else if (norm <= 2) mantissa = 2;
  else if (norm <= 5) mantissa = 5;
  else { mantissa = 1; exponent++; }
  const value = (i: number) => (exponent >= 0 ? i * mantissa * 10 ** exponent : (i * mantissa) / 10 ** -exponent);
  const spacing = value(1);
  const values: number[] = [];
  // A relative slack of 1e-9 keeps a tick that lies on an end but was computed a rounding off.
  const slack = 1e-9;
  for (let i = Math.ceil(lo / spacing - slack), last = Math.floor(hi / spacing + slack); i <= last; i++) {
    const v = value(i);
    values.push(v === 0 ? 0 : v); // no −0 labels
  }
  return { spacing, mantissa, exponent, values };
}

/** Pixel row of value v in a plot whose top is at `top` and which is `height` tall. */
export function valueToY(v: number, range: YRange, top: number, height: number): number {
  // Halves first, so a range as wide as the float64 line does not overflow to ∞.
  return top + ((range.hi / 2 - v / 2) / (range.hi / 2 - range.lo / 2)) * height;
}

// ---------------------------------------------------------------------------------------------
// x: the shared time axis

const spanOf = (view: ViewRange) => (view.to > view.from ? view.to - view.from : 1);

/** Pixel of the left edge of step position `step` (add ½ for a step's centre). */
export function stepToX(step: number, view: ViewRange, width: number): number {
  return ((step - view.from) * width) / spanOf(view);
}

/** Step position (fractional) at pixel x. */
export function xToStep(x: number, view: ViewRange, width: number): number {
  return view.from + (x * spanOf(view)) / (width > 0 ? width : 1);
}

/** The step whose slot lies under pixel x, clamped to the episode; null for an empty episode. */
export function stepAtX(x: number, view: ViewRange, width: number, n: number): number | null {
  if (n <= 0) return null;
  const s = Math.floor(xToStep(x, view, width));
  return s < 0 ? 0 : s > n - 1 ? n - 1 : s;
}

/**
 * Integer steps [from, to) to decimate for a view: every step whose slot is at least partly
 * visible, plus one neighbour on each side so the line runs on to the plot's edges.
 */
export function stepsToDecimate(view: ViewRange, n: number): { from: number; to: number } {
  const from = Math.max(0, Math.floor(view.from) - 1);
  const to = Math.min(n, Math.ceil(view.to) + 1);
  return to > from ? { from, to } : { from: 0, to: 0 };
}

/**
 * A view moved and trimmed into [0, n]: a span wider than the episode becomes the whole episode,
 * narrower than `minSpan` (or the episode, if shorter) grows about its centre, and then the view
 * slides (keeping its span) until it lies inside.
 */
export function clampView(view: ViewRange, n: number, minSpan = MIN_SPAN): ViewRange {
  if (!(n > 0)) return { from: 0, to: 0 };
  let span = view.to - view.from;
  if (!Number.isFinite(span) || span >= n) return { from: 0, to: n };
  const least = Math.min(minSpan, n);
  let from = view.from;
  if (!(span >= least)) {
    from += (span - least) / 2;
    span = least;
  }
  if (!Number.isFinite(from)) from = 0;
  if (from < 0) from = 0;
  if (from + span > n) from = n - span;
  return { from, to: from + span };
}

/**
 * Zoom by `factor` (> 1 widens the view, < 1 narrows it) about `anchor`, a step position: the
 * anchor keeps its pixel, i.e. its fraction of the way across the view, unless the clamp to
 * [0, n] or to the smallest span has to move it.
 */
export function zoomAbout(view: ViewRange, factor: number, anchor: number, n: number, minSpan = MIN_SPAN): ViewRange {
  const span = view.to - view.from;
  if (!(factor > 0) || !(span > 0)) return clampView(view, n, minSpan);
  const least = Math.min(minSpan, n);
  const next = Math.min(n, Math.max(least, span * factor));
  const from = anchor - ((anchor - view.from) * next) / span;
  return clampView({ from, to: from + next }, n, minSpan);
}

/** Pan by a drag of dx pixels (positive: the content follows the pointer to the right). */
export function panByPixels(view: ViewRange, dx: number, width: number, n: number, minSpan = MIN_SPAN): ViewRange {
  const shift = (-dx * spanOf(view)) / (width > 0 ? width : 1);
  return clampView({ from: view.from + shift, to: view.to + shift }, n, minSpan);
}

/**
 * Zoom factor for one wheel event: exponential in the distance scrolled, so two small scrolls
 * equal one large one and zooming in then out by the same amount returns to the same view.
 * deltaMode 1 is lines, 2 pages (WheelEvent, DOM UI Events).
 */
export function wheelZoomFactor(deltaY: number, deltaMode = 0): number {
  const pixels = deltaMode === 1 ? deltaY * 16 : deltaMode === 2 ? deltaY * 400 : deltaY;
  return Math.exp(pixels * 0.002);
}

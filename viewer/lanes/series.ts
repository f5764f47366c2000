/**
 * One series of a lane, drawn from its M4 columns (`decimate.ts`).
 *
 * Two ways, by density:
 * - dense (a step or more per device-pixel column): each column is about one device pixel wide,
 *   so its line is a vertical bar from its lowest to its highest point, joined to the previous
 *   column by reaching to that column's last value. A bar per column is what a polyline through the four M4
 *   points rasterises to, and fillRect is an order of magnitude cheaper than stroking thousands of
 *   sliver segments (measured in headless Chromium: ~1.5 ms against ~30 ms for 1,700 columns).
 * - sparse (zoomed in): a true polyline through the points at their steps' centres, stroked in
 *   chunks, since long paths stroke disproportionately slowly.
 * Both lift the pen wherever a non-finite value lies between two points.
 */
import { BREAK_AFTER, BREAK_BEFORE, BREAK_GAP_0, columnStart, type M4Result } from './decimate.ts';
import { stepToX, valueToY, type ViewRange, type YRange } from './scale.ts';

export interface SeriesStyle {
  colour: string;
  emphasis?: Uint8Array;
  dashed?: boolean;
  fill?: boolean;
}

export interface Plot { left: number; top: number; width: number; height: number }

const LINE = 1.25; // CSS px
const LINE_UNDER_EMPHASIS = 1;
const EMPHASIS = 2.5;
const FILL_ALPHA = 0.16;
const DASH = [5, 3] as const; // CSS px on, off
const CHUNK = 256; // points per stroked sub-path

/** Draw one series; the caller has clipped to the plot. */
export function drawSeries(
  ctx: CanvasRenderingContext2D, d: M4Result, style: SeriesStyle, view: ViewRange, plot: Plot, y: YRange, dpr: number,
): void {
  const zeroY = Math.min(Math.max(valueToY(0, y, plot.top, plot.height), plot.top), plot.top + plot.height);
  ctx.fillStyle = style.colour;
  ctx.strokeStyle = style.colour;
  if (d.to - d.from >= d.columns) drawDense(ctx, d, style, view, plot, y, dpr, zeroY);
  else drawSparse(ctx, d, style, view, plot, y, zeroY);
}

function drawDense(
  ctx: CanvasRenderingContext2D, d: M4Result, style: SeriesStyle, view: ViewRange, plot: Plot, y: YRange, dpr: number, zeroY: number,
) {
  const emph = style.emphasis;
  const passes = emph ? [LINE_UNDER_EMPHASIS, EMPHASIS] : [LINE];
  if (style.fill) passes.unshift(0); // 0: the fill pass
  for (const width of passes) {
    const emphasisPass = emph !== undefined && width === EMPHASIS;
    ctx.globalAlpha = width === 0 ? FILL_ALPHA : 1;
    let prevY = NaN, prevIndex = -1; // the previous column's last point, NaN after a lift
    for (let c = 0; c < d.columns; c++) {
      const n = d.pointCount[c];
      const br = d.breaks[c];
      if (n === 0) {
        if (br & BREAK_BEFORE) prevY = NaN;
        continue;
      }
      const base = 4 * c;
      const first = d.pointIndex[base], last = d.pointIndex[base + n - 1];
      // The column's device pixels: from its first step's left edge to the next column's, so
      // neighbouring columns tile the plot with neither gaps nor overlaps.
      const xa = Math.round((plot.left + stepToX(columnStart(c, d.from, d.to, d.columns), view, plot.width)) * dpr);
      const xb = Math.round((plot.left + stepToX(columnStart(c + 1, d.from, d.to, d.columns), view, plot.width)) * dpr);
      const span = Math.max(1, xb - xa);
      let top = Infinity, bottom = -Infinity;
      for (let p = 0; p < n; p++) {
        const py = valueToY(d.pointValue[base + p], y, plot.top, plot.height);
        if (py < top) top = py;
        if (py > bottom) bottom = py;
      }
      const lastY = valueToY(d.pointValue[base + n - 1], y, plot.top, plot.height);
      const joined = !(br & BREAK_BEFORE) && prevY === prevY && (!emphasisPass || emph![prevIndex]);
      if (joined) {
        if (prevY < top) top = prevY;
        if (prevY > bottom) bottom = prevY;
      }
      prevY = br & BREAK_AFTER ? NaN : lastY;
      prevIndex = last;
      if (emphasisPass && !(emph![first] && emph![last])) continue;
      if (style.dashed && width !== 0 && (xa / dpr - plot.left) % (DASH[0] + DASH[1]) >= DASH[0]) continue;
      if (width === 0) {
        const a = Math.min(top, zeroY), b = Math.max(bottom, zeroY);
        ctx.fillRect(xa / dpr, a, span / dpr, b - a);
      } else {
        // `width` thick: whole device pixels either side across, width/2 beyond the ends along.
        const extra = Math.max(0, Math.round((width * dpr - 1) / 2));
        ctx.fillRect((xa - extra) / dpr, top - width / 2, (span + 2 * extra) / dpr, bottom - top + width);
      }
    }
  }
  ctx.globalAlpha = 1;
}

// Scratch for the sparse polyline, grown on demand and reused: no objects per point.
let px = new Float32Array(0), py = new Float32Array(0), pi = new Int32Array(0), pen = new Uint8Array(0);

/** The series' points in CSS px; pen[i] = 1 where the pen lifts before point i. */
function trace(d: M4Result, view: ViewRange, plot: Plot, y: YRange): number {
  if (px.length < 4 * d.columns) {
    const size = Math.max(4 * d.columns, 2 * px.length);
    px = new Float32Array(size); py = new Float32Array(size); pi = new Int32Array(size); pen = new Uint8Array(size);
  }
  let k = 0;
  let lifted = true;
  for (let c = 0; c < d.columns; c++) {
    const br = d.breaks[c];
    if (br & BREAK_BEFORE) lifted = true;
    for (let p = 0, count = d.pointCount[c]; p < count; p++) {
      if (p > 0 && br & (BREAK_GAP_0 << (p - 1))) lifted = true;
      const step = d.pointIndex[4 * c + p];
      px[k] = plot.left + stepToX(step + 0.5, view, plot.width);
      py[k] = valueToY(d.pointValue[4 * c + p], y, plot.top, plot.height);
      pi[k] = step;
      pen[k] = lifted ? 1 : 0;
      lifted = false;
      k++;
    }
    if (br & BREAK_AFTER) lifted = true;
  }
  return k;
}

/** Stroke segments i−1 → i for which `keep(i)` holds, in sub-paths of at most CHUNK points. */
function strokeRuns(ctx: CanvasRenderingContext2D, k: number, keep: (i: number) => boolean) {
  let inPath = 0;
  let open = false;
  ctx.beginPath();
  for (let i = 1; i < k; i++) {
    if (!keep(i)) { open = false; continue; }
    if (!open || inPath >= CHUNK) {
      if (inPath >= CHUNK) { ctx.stroke(); ctx.beginPath(); inPath = 0; }
      ctx.moveTo(px[i - 1], py[i - 1]);
    }
    ctx.lineTo(px[i], py[i]);
    inPath++;
    open = true;
  }
  ctx.stroke();
}

function drawSparse(ctx: CanvasRenderingContext2D, d: M4Result, style: SeriesStyle, view: ViewRange, plot: Plot, y: YRange, zeroY: number) {
  const k = trace(d, view, plot, y);
  if (style.fill) {
    // One closed shape per unbroken run, down to the zero line and back.
    ctx.globalAlpha = FILL_ALPHA;
    ctx.beginPath();
    for (let i = 0; i < k; i++) {
      if (pen[i]) ctx.moveTo(px[i], zeroY);
      ctx.lineTo(px[i], py[i]);
      if (i + 1 === k || pen[i + 1]) { ctx.lineTo(px[i], zeroY); ctx.closePath(); }
    }
    ctx.fill();
    ctx.globalAlpha = 1;
  }
  ctx.lineJoin = 'round';
  ctx.lineWidth = style.emphasis ? LINE_UNDER_EMPHASIS : LINE;
  ctx.setLineDash(style.dashed ? [...DASH] : []);
  strokeRuns(ctx, k, (i) => !pen[i]);
  ctx.setLineDash([]);
  // A finite value alone between non-finite ones has no segment to show it: give it a dot.
  for (let i = 0; i < k; i++) if (pen[i] && (i + 1 === k || pen[i + 1])) ctx.fillRect(px[i] - 1.25, py[i] - 1.25, 2.5, 2.5);
  const emph = style.emphasis;
  if (!emph) return;
  // Thicker where both ends of a segment are emphasised (e.g. both steps greedy for this action).
  ctx.lineWidth = EMPHASIS;
  strokeRuns(ctx, k, (i) => !pen[i] && emph[pi[i - 1]] === 1 && emph[pi[i]] === 1);
}

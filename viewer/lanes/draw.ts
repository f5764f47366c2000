/**
 * Drawing one lane into a Canvas 2D context, and where the cursor line over the lanes goes.
 *
 * Canvas 2D (not Pixi) because a lane is crisp 1-px lines and small text. The input is M4 output
 * (`decimate.ts`), so a redraw costs a bar or four points per pixel column whatever the episode's
 * length (`series.ts`). Non-finite values are drawn as marks at the plot's edges, never as silent gaps.
 */
import type { M4Result } from './decimate.ts';
import { drawNonFinite } from './marks.ts';
import { drawSeries } from './series.ts';
import { niceTicks, stepToX, valueToY, type ViewRange, type YRange } from './scale.ts';
import { formatTick } from './format.ts';
import { palette, type } from '../theme.ts';

/** CSS px left of the plot, for tick labels. The Ruler aligns to the plot with the same inset. */
export const LANE_GUTTER = 44;
/** CSS px above the plot, for the title and legend. */
export const LANE_HEADER = 18;
const PLOT_BOTTOM_PAD = 3;

export interface DrawSeries {
  name: string;
  colour: string;
  /** M4 of this series; every series of a lane is decimated over the same steps and columns. */
  decimated: M4Result;
  /** 1 at steps where the line is emphasised (drawn thicker), e.g. where this action is greedy. */
  emphasis?: Uint8Array;
  /** A reference series (e.g. the realised return): dashed. */
  dashed?: boolean;
  /** Fill between the line and zero, so the sign reads at a glance (TD error, reward). */
  fill?: boolean;
}

export interface LaneFrame {
  /** Canvas size in CSS px, and device pixels per CSS px. */
  width: number;
  height: number;
  dpr: number;
  view: ViewRange;
  title: string;
  unit?: string;
  series: readonly DrawSeries[];
  yRange: YRange;
  /** Draw the y = 0 rule stronger than the grid. */
  zeroLine?: boolean;
}

export interface PlotRect { left: number; top: number; width: number; height: number }

/** Where the plot sits inside a lane canvas of the given CSS size. */
export function plotRect(width: number, height: number): PlotRect {
  return {
    left: LANE_GUTTER,
    top: LANE_HEADER,
    width: Math.max(1, width - LANE_GUTTER),
    height: Math.max(1, height - LANE_HEADER - PLOT_BOTTOM_PAD),
  };
}

/** Draw a horizontal rule exactly on device pixels, so 1-px lines stay sharp at any dpr. */
function rule(ctx: CanvasRenderingContext2D, dpr: number, x: number, y: number, w: number, colour: string) {
  ctx.fillStyle = colour;
  ctx.fillRect(x, Math.round(y * dpr) / dpr, w, 1 / dpr);
}

/** The text cut to fit `room` px, with an ellipsis when cut. */
function fit(ctx: CanvasRenderingContext2D, text: string, room: number): string {
  if (ctx.measureText(text).width <= room) return text;
  let lo = 0, hi = text.length;
  while (lo < hi) {
    const mid = (lo + hi + 1) >> 1;
    if (ctx.measureText(text.slice(0, mid) + '…').width <= room) lo = mid;
    else hi = mid - 1;
  }
  return lo > 0 ? text.slice(0, lo) + '…' : '';
}

/** Title and unit on the left; the legend on the right, where the lines end. */
function drawHeader(ctx: CanvasRenderingContext2D, f: LaneFrame) {
  ctx.textBaseline = 'middle';
  ctx.textAlign = 'left';
  const y = LANE_HEADER / 2 + 1;
  const legendFont = `${type.small}px ${type.family}`;
  const titleFont = `600 ${type.small + 1}px ${type.family}`;
  ctx.font = legendFont;
  // Legend entries from the left, as many as fit in the space right of a minimal title.
  const entries: { s: DrawSeries; w: number }[] = [];
  let legendWidth = 0;
  for (const s of f.series) {
    const w = 18 + ctx.measureText(s.name).width + 12;
    if (legendWidth + w > f.width - LANE_GUTTER - 60) break;
    entries.push({ s, w });
    legendWidth += w;
  }
  let x = f.width - legendWidth;
  for (const { s, w } of entries) {
    ctx.strokeStyle = s.colour;
    ctx.lineWidth = s.emphasis ? 2.5 : 1.5;
    ctx.setLineDash(s.dashed ? [4, 2] : []);
    ctx.beginPath();
    ctx.moveTo(x, y);
    ctx.lineTo(x + 14, y);
    ctx.stroke();
    ctx.setLineDash([]);
    ctx.fillStyle = palette.inkSoft;
    ctx.fillText(s.name, x + 18, y);
    x += w;
  }
  const room = f.width - legendWidth - 6 - 12;
  ctx.font = titleFont;
  ctx.fillStyle = palette.ink;
  const title = fit(ctx, f.title, room);
  ctx.fillText(title, 6, y);
  if (f.unit && title === f.title) {
    const tx = 6 + ctx.measureText(title).width + 5;
    ctx.font = legendFont;
    ctx.fillStyle = palette.inkFaint;
    ctx.fillText(fit(ctx, f.unit, room - tx), tx, y);
  }
}

/** Draw one lane: background, grid and tick labels, series, non-finite marks, title and legend. */
export function drawLane(ctx: CanvasRenderingContext2D, f: LaneFrame): void {
  const { width, height, dpr, view, yRange } = f;
  ctx.setTransform(dpr, 0, 0, dpr, 0, 0);
  ctx.fillStyle = palette.panel;
  ctx.fillRect(0, 0, width, height);
  const plot = plotRect(width, height);

  const ticks = niceTicks(yRange.lo, yRange.hi, Math.max(1, plot.height / 15));
  ctx.font = `${type.small}px ${type.mono}`;
  ctx.textAlign = 'right';
  ctx.textBaseline = 'middle';
  for (const v of ticks.values) {
    const y = valueToY(v, yRange, plot.top, plot.height);
    rule(ctx, dpr, plot.left, y, plot.width, v === 0 && f.zeroLine ? palette.inkFaint : palette.rule);
    ctx.fillStyle = palette.inkSoft;
    ctx.fillText(formatTick(v, ticks), plot.left - 5, Math.min(Math.max(y, plot.top + 5), plot.top + plot.height - 5));
  }
  if (f.zeroLine && yRange.lo < 0 && yRange.hi > 0 && !ticks.values.includes(0))
    rule(ctx, dpr, plot.left, valueToY(0, yRange, plot.top, plot.height), plot.width, palette.inkFaint);

  ctx.save();
  ctx.beginPath();
  ctx.rect(plot.left, 0, plot.width, height);
  ctx.clip();
  for (const s of f.series) drawSeries(ctx, s.decimated, s, view, plot, yRange, dpr);
  drawNonFinite(ctx, f.series, view, plot);
  ctx.restore();

  drawHeader(ctx, f);
  rule(ctx, dpr, 0, height - 0.5, width, palette.rule);
}

/** A vertical line over the lanes, in CSS px: its left edge and its width. */
export interface LineBox {
  left: number;
  width: number;
}

/**
 * Where the line marking a step sits over the lanes: centred on the step's slot and snapped to
 * whole device pixels, so a line `cssWidth` wide stays sharp at any dpr; null when the step is
 * outside the view. The line is an element the browser moves without repainting the lanes.
 */
export function stepLine(step: number, f: { width: number; dpr: number; view: ViewRange }, cssWidth: number): LineBox | null {
  const plotWidth = Math.max(1, f.width - LANE_GUTTER);
  const x = LANE_GUTTER + stepToX(step + 0.5, f.view, plotWidth);
  if (!(x >= LANE_GUTTER && x <= f.width)) return null;
  const w = Math.max(1, Math.round(cssWidth * f.dpr));
  return { left: Math.round(x * f.dpr - w / 2) / f.dpr, width: w / f.dpr };
}

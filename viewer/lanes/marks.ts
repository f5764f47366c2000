/**
 * Non-finite marks for a lane: where a series is NaN or ±∞ there is no line to draw, so the lane
 * says so at its edge, in the alarm colour, with how many such values lie there. These values are
 * evidence (the first non-finite Q is often where a run went wrong) and must never look like a gap.
 */
import { columnStart } from './decimate.ts';
import type { DrawSeries, PlotRect } from './draw.ts';
import { stepToX, type ViewRange } from './scale.ts';
import { palette, type } from '../theme.ts';

const KINDS = [
  { label: '+∞', row: 0, key: 'posInfCount', filled: true },
  { label: 'NaN', row: 1, key: 'nanCount', filled: false },
  { label: '−∞', row: -1, key: 'negInfCount', filled: true },
] as const;

/**
 * Non-finite marks: per kind, runs of columns closer than 3 px merge into one mark — a bar along
 * the edge over the run, a triangle at its centre, and the count of such values in the run (all
 * series of the lane together). +∞ and NaN sit at the top (NaN one row lower, hollow), −∞ at the bottom.
 */
export function drawNonFinite(ctx: CanvasRenderingContext2D, series: readonly DrawSeries[], view: ViewRange, plot: PlotRect) {
  if (series.length === 0) return;
  const d0 = series[0].decimated;
  ctx.font = `${type.small}px ${type.mono}`;
  ctx.textBaseline = 'middle';
  ctx.textAlign = 'left';
  ctx.lineJoin = 'round';
  for (const kind of KINDS) {
    const yMid = kind.row >= 0 ? plot.top + 4 + kind.row * 9 : plot.top + plot.height - 4;
    let runX0 = 0, runX1 = -Infinity, runCount = 0, labelEnd = -Infinity;
    const flush = () => {
      if (runCount === 0) return;
      const mid = (runX0 + runX1) / 2;
      ctx.fillStyle = palette.alarm;
      ctx.strokeStyle = palette.alarm;
      ctx.fillRect(runX0, kind.row >= 0 ? yMid - 4 : yMid + 3, Math.max(1, runX1 - runX0), 1);
      const up = kind.row >= 0 ? -1 : 1; // the triangle points off the plot, toward ±∞
      ctx.beginPath();
      ctx.moveTo(mid, yMid + 3.5 * up);
      ctx.lineTo(mid - 3.5, yMid - 3 * up);
      ctx.lineTo(mid + 3.5, yMid - 3 * up);
      ctx.closePath();
      ctx.lineWidth = 1.25;
      if (kind.filled) ctx.fill(); else ctx.stroke();
      const text = `${kind.label} ${runCount}`;
      const x = mid + 6;
      // Skip a label that would overprint the previous one; the readout gives exact values anyway.
      if (x > labelEnd && x < plot.left + plot.width - 8) {
        ctx.strokeStyle = palette.panel;
        ctx.lineWidth = 3;
        ctx.strokeText(text, x, yMid);
        ctx.fillText(text, x, yMid);
        labelEnd = x + ctx.measureText(text).width + 4;
      }
      runCount = 0;
    };
    for (let c = 0; c < d0.columns; c++) {
      let total = 0;
      for (const s of series) total += s.decimated[kind.key][c];
      if (total === 0) continue;
      const x0 = plot.left + stepToX(columnStart(c, d0.from, d0.to, d0.columns), view, plot.width);
      const x1 = plot.left + stepToX(columnStart(c + 1, d0.from, d0.to, d0.columns), view, plot.width);
      if (x0 - runX1 >= 3) { flush(); runX0 = x0; }
      runX1 = x1;
      runCount += total;
    }
    flush();
  }
}

import { describe, expect, it } from 'vitest';
import { m4 } from '../../viewer/lanes/decimate.ts';
import {
  MIN_SPAN, clampView, finiteExtent, laneYRange, niceTicks, panByPixels, stepAtX, stepToX,
  stepsToDecimate, valueToY, wheelZoomFactor, xToStep, zoomAbout,
} from '../../viewer/lanes/scale.ts';
import { formatTick, formatValue } from '../../viewer/lanes/format.ts';

describe('niceTicks', () => {
  it.each([
    { lo: 0, hi: 9.7, ticks: [0, 2, 4, 6, 8] },
    { lo: 0, hi: 1, ticks: [0, 0.2, 0.4, 0.6, 0.8, 1] },
    { lo: -3, hi: 3, ticks: [-2, 0, 2] },
    { lo: 0, hi: 100, ticks: [0, 20, 40, 60, 80, 100] },
    { lo: 0.5, hi: 0.53, ticks: [0.5, 0.51, 0.52, 0.53] },
    { lo: -0.7, hi: -0.1, ticks: [-0.6, -0.4, -0.2] },
    { lo: 1e6, hi: 5e6, ticks: [1e6, 2e6, 3e6, 4e6, 5e6] },
    { lo: -1.05, hi: 0.05, ticks: [-1, -0.5, 0] },
  ])('[$lo, $hi] → $ticks', ({ lo, hi, ticks }) => {
    // toEqual on the literals: 0.6 must be 0.6, not 0.6000000000000001.
    expect(niceTicks(lo, hi, 5).values).toEqual(ticks);
  });

  it('uses only 1, 2 or 5 × 10^k and never labels −0', () => {
    for (const [lo, hi] of [[0, 3], [-7, 0.01], [1e-4, 9e-4], [-250, 10]]) {
      const t = niceTicks(lo, hi, 5);
      expect([1, 2, 5]).toContain(t.mantissa);
      expect(t.spacing).toBeCloseTo(t.mantissa * 10 ** t.exponent, 12);
      expect(t.values.every((v) => !Object.is(v, -0))).toBe(true);
    }
    expect(niceTicks(3, 3).values).toEqual([3]);
    expect(niceTicks(NaN, 1).values).toEqual([]);
  });

  it('labels with just the decimals the spacing needs', () => {
    const t = niceTicks(0, 1, 5);
    expect(t.values.map((v) => formatTick(v, t))).toEqual(['0', '0.2', '0.4', '0.6', '0.8', '1.0']);
    const big = niceTicks(0, 1e8, 5);
    expect(formatTick(big.values[1], big)).toBe('2e+7');
  });
});

describe('lane y range', () => {
  it('pads the finite extent by 5% each side', () => {
    expect(laneYRange({ lo: 0, hi: 10 })).toEqual({ lo: -0.5, hi: 10.5 });
  });

  it('gives a flat series a symmetric range, and no data a neutral one', () => {
    const flat = laneYRange({ lo: 3, hi: 3 });
    expect(flat.lo).toBeCloseTo(2.7, 12);
    expect(flat.hi).toBeCloseTo(3.3, 12);
    expect(laneYRange({ lo: 0, hi: 0 })).toEqual({ lo: -1, hi: 1 });
    expect(laneYRange(null)).toEqual({ lo: -1, hi: 1 });
  });

  it('takes the extent from the decimated finite values only', () => {
    const a = m4(Float64Array.of(1, NaN, 4, Infinity, -2, -Infinity), 1, 0, 0, 6, 3);
    const b = m4(Float64Array.of(0, 9, NaN, NaN, 0, 0), 1, 0, 0, 6, 3);
    expect(finiteExtent([a, b])).toEqual({ lo: -2, hi: 9 });
    expect(finiteExtent([m4(Float64Array.of(NaN, Infinity), 1, 0, 0, 2, 2)])).toBeNull();
  });

  it('maps the range onto the plot, top to bottom', () => {
    expect(valueToY(10, { lo: 0, hi: 10 }, 20, 100)).toBe(20);
    expect(valueToY(0, { lo: 0, hi: 10 }, 20, 100)).toBe(120);
  });
});

describe('time axis', () => {
  const view = { from: 100, to: 300 };

  it('maps steps to pixels and back; a step owns the slot [s, s + 1)', () => {
    expect(stepToX(100, view, 800)).toBe(0);
    expect(stepToX(300, view, 800)).toBe(800);
    expect(xToStep(400, view, 800)).toBe(200);
    expect(stepAtX(401, view, 800, 1000)).toBe(200);
    expect(stepAtX(-50, { from: 0, to: 10 }, 100, 10)).toBe(0);
    expect(stepAtX(150, { from: 0, to: 10 }, 100, 10)).toBe(9);
    expect(stepAtX(10, view, 800, 0)).toBeNull();
  });

  it('decimates the visible steps plus one neighbour each side, inside the episode', () => {
    expect(stepsToDecimate({ from: 10.5, to: 20.2 }, 100)).toEqual({ from: 9, to: 22 });
    expect(stepsToDecimate({ from: 0, to: 100 }, 100)).toEqual({ from: 0, to: 100 });
  });

  it('zoom keeps the step under the pointer under the pointer', () => {
    const width = 600;
    for (const [x, factor] of [[240, 0.5], [240, 1.7], [10, 0.2], [590, 1.3]]) {
      const anchor = xToStep(x, view, width);
      const next = zoomAbout(view, factor, anchor, 1000);
      expect(next.to - next.from).toBeCloseTo(200 * factor, 9);
      expect(xToStep(x, next, width)).toBeCloseTo(anchor, 9);
    }
  });

  it('zoom clamps to the episode and to the smallest span', () => {
    expect(zoomAbout(view, 100, 200, 1000)).toEqual({ from: 0, to: 1000 });
    const tight = zoomAbout(view, 1e-6, 200, 1000);
    expect(tight.to - tight.from).toBe(MIN_SPAN);
    expect(tight.from).toBeCloseTo(200 - (200 - 100) * (MIN_SPAN / 200), 9);
    // Zoomed out near the start, the view slides right rather than leaving the episode.
    const edge = zoomAbout({ from: 10, to: 110 }, 2, 60, 1000);
    expect(edge).toEqual({ from: 0, to: 200 });
    // Zooming in and back out by the same wheel distance returns to the same view.
    const back = zoomAbout(zoomAbout(view, wheelZoomFactor(120), 150, 1000), wheelZoomFactor(-120), 150, 1000);
    expect(back.from).toBeCloseTo(view.from, 9);
    expect(back.to).toBeCloseTo(view.to, 9);
  });

  it('pan follows the pointer and clamps at 0 and n, keeping the span', () => {
    expect(panByPixels(view, 100, 800, 1000)).toEqual({ from: 75, to: 275 });
    expect(panByPixels(view, -100, 800, 1000)).toEqual({ from: 125, to: 325 });
    expect(panByPixels(view, 10_000, 800, 1000)).toEqual({ from: 0, to: 200 });
    expect(panByPixels(view, -10_000, 800, 1000)).toEqual({ from: 800, to: 1000 });
  });

  it('clamps a view into [0, n]', () => {
    expect(clampView({ from: -5, to: 20 }, 100)).toEqual({ from: 0, to: 25 });
    expect(clampView({ from: 50, to: 500 }, 100)).toEqual({ from: 0, to: 100 });
    expect(clampView({ from: 10, to: 10 }, 100)).toEqual({ from: 8, to: 12 });
    expect(clampView({ from: 0, to: 1 }, 2)).toEqual({ from: 0, to: 2 });
    expect(clampView({ from: 0, to: 1 }, 0)).toEqual({ from: 0, to: 0 });
  });
});

describe('readout values', () => {
  it("shows non-finite values as 'NaN', '∞', '−∞'", () => {
    expect([NaN, Infinity, -Infinity].map((v) => formatValue(v))).toEqual(['NaN', '∞', '−∞']);
  });

  it('shows the shortest decimal that reads back as the stored value', () => {
    expect(formatValue(Math.fround(0.1), true)).toBe('0.1');
    expect(formatValue(Math.fround(1 / 3), true)).toBe('0.33333334');
    expect(formatValue(0.1)).toBe('0.1');
    expect(formatValue(-2.5e-7, true)).toBe('-2.5e-7');
    for (const v of [Math.fround(Math.PI), Math.fround(-1234.5678), Math.fround(3.4e38)]) expect(Math.fround(Number(formatValue(v, true)))).toBe(v);
  });
});

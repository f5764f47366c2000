/** Where the Lanes' cursor and hover lines go: on the step's slot, in whole device pixels. */
import { describe, expect, it } from 'vitest';
import { LANE_GUTTER, stepLine } from '../../viewer/lanes/draw.ts';

describe('the line marking a step over the lanes', () => {
  // 100 steps over a 400 px plot: 4 px per step, so step t's slot is [4t, 4t + 4) past the gutter.
  const frame = { width: LANE_GUTTER + 400, dpr: 1, view: { from: 0, to: 100 } };

  it('is centred on the step’s slot', () => {
    const line = stepLine(10, frame, 2)!;
    expect(line.left + line.width / 2).toBe(LANE_GUTTER + 42);
    expect(line.width).toBe(2);
  });

  it('covers whole device pixels, at any device pixel ratio', () => {
    for (const dpr of [1, 1.25, 1.5, 2, 3]) {
      for (const step of [0, 7, 33, 99]) {
        const line = stepLine(step, { ...frame, dpr }, 1.5)!;
        expect(Number.isInteger(Math.round(line.left * dpr * 1e9) / 1e9), `left at dpr ${dpr}`).toBe(true);
        expect(line.width * dpr).toBe(Math.max(1, Math.round(1.5 * dpr)));
        // Never more than half a device pixel off the slot's centre.
        expect(Math.abs(line.left + line.width / 2 - (LANE_GUTTER + 4 * step + 2))).toBeLessThanOrEqual(0.5 / dpr + 1e-9);
      }
    }
  });

  it('follows the view when zoomed in', () => {
    const line = stepLine(55, { ...frame, view: { from: 50, to: 60 } }, 2)!;
    // 10 steps over 400 px: step 55's slot is [200, 240).
    expect(line.left + line.width / 2).toBe(LANE_GUTTER + 220);
  });

  it('is absent for a step outside the view', () => {
    expect(stepLine(49, { ...frame, view: { from: 50, to: 60 } }, 1)).toBeNull();
    expect(stepLine(60, { ...frame, view: { from: 50, to: 60 } }, 1)).toBeNull();
  });
});

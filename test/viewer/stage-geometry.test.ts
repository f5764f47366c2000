/**
 * The Stage's geometry, checked against pixels worked out by hand from the drawing's conventions:
 * canvas x to the right and y DOWN (as on screen); one px/m scale along both axes of the trolley.
 * The physical conventions are src/envs/cartpole.ts's (θ > 0 leans toward +x, F > 0 pushes
 * right) and src/envs/mountaincar.ts's (floor y = sin(3x), Sutton & Barto 2018, Example 10.1).
 * The screen-geometry steps (mapping an interval onto pixels, rotating by an angle) are
 * common practice.
 */

import { describe, expect, it } from 'vitest';
import { directionFromName, formatValue, sinRange, stageGeometry } from '../../viewer/stage/geometry.ts';
import type { GaugeStage, RoverStage, StageInput, TrolleyStage } from '../../viewer/stage/geometry.ts';

const ANGLE_LIMIT = (12 * Math.PI) / 180;

function trolleyInput(state: number[], action = 1, over: Partial<StageInput> = {}): StageInput {
  return {
    system: {
      kind: 'cart-pole',
      title: 'balancing trolley',
      map: { position: 0, velocity: 1, angle: 2, angularVelocity: 3 },
      params: { railHalfLength: 2.4, poleHalfLength: 0.5, angleLimit: ANGLE_LIMIT, force: 10, tau: 0.02 },
    },
    stateDims: [
      { name: 'x', unit: 'm' },
      { name: 'x_dot', unit: 'm/s' },
      { name: 'theta', unit: 'rad' },
      { name: 'theta_dot', unit: 'rad/s' },
    ],
    actions: ['push left', 'push right'],
    state,
    action,
    explored: false,
    width: 800,
    height: 400,
    ...over,
  };
}

const trolley = (input: StageInput) => {
  const stage = stageGeometry(input);
  expect(stage.kind).toBe('cart-pole');
  return stage as TrolleyStage;
};

describe('Stage: balancing trolley (cart-pole)', () => {
  it('puts the trolley at x = 0 in the middle of the canvas', () => {
    // The rail is symmetric about x = 0 and centred on the canvas: 800 / 2 = 400 px.
    const stage = trolley(trolleyInput([0, 0, 0, 0]));
    expect(stage.trolley.x).toBeCloseTo(400, 9);
    expect(stage.mast.x0).toBeCloseTo(400, 9);
  });

  it('puts the trolley at ±railHalfLength on the rail ends, at one px/m scale', () => {
    const right = trolley(trolleyInput([2.4, 0, 0, 0]));
    const left = trolley(trolleyInput([-2.4, 0, 0, 0]));
    expect(right.trolley.x).toBeCloseTo(right.rail.x1, 9);
    expect(left.trolley.x).toBeCloseTo(left.rail.x0, 9);
    // The rail is 2 · 2.4 = 4.8 m long at `scale` px/m, and the limit marks sit on its ends.
    expect(right.rail.x1 - right.rail.x0).toBeCloseTo(4.8 * right.scale, 9);
    expect(right.limits.map((limit) => limit.x)).toEqual([right.rail.x0, right.rail.x1]);
    // The whole rail, with half a trolley past each end, stays on the canvas.
    expect(right.rail.x0 - right.trolley.w / 2).toBeGreaterThanOrEqual(0);
    expect(right.rail.x1 + right.trolley.w / 2).toBeLessThanOrEqual(800);
  });

  it('draws the mast straight up from the pivot at θ = 0', () => {
    const stage = trolley(trolleyInput([0, 0, 0, 0]));
    // Mast length L = 2 · poleHalfLength = 1 m, i.e. 1 · scale px; "up" is smaller canvas y.
    expect(stage.mast.x1).toBeCloseTo(stage.mast.x0, 9);
    expect(stage.mast.y0 - stage.mast.y1).toBeCloseTo(1 * stage.scale, 9);
    // The pivot is on the trolley's top edge.
    expect(stage.mast.y0).toBeCloseTo(stage.trolley.y - stage.trolley.h / 2, 9);
  });

  it('leans the mast to the RIGHT for θ = +0.1 rad and to the left for θ = −0.1 rad', () => {
    const stage = trolley(trolleyInput([0, 0, 0.1, 0]));
    // θ > 0 leans toward +x: tip = pivot + L·scale·(sin θ, −cos θ) with L = 1 m.
    expect(stage.mast.x1 - stage.mast.x0).toBeCloseTo(1 * Math.sin(0.1) * stage.scale, 9);
    expect(stage.mast.y0 - stage.mast.y1).toBeCloseTo(1 * Math.cos(0.1) * stage.scale, 9);
    expect(stage.mast.x1).toBeGreaterThan(stage.mast.x0);

    const mirrored = trolley(trolleyInput([0, 0, -0.1, 0]));
    expect(mirrored.mast.x1 - mirrored.mast.x0).toBeCloseTo(-Math.sin(0.1) * mirrored.scale, 9);
  });

  it('scales the mast with poleHalfLength at the same px/m as the rail', () => {
    const input = trolleyInput([0, 0, 0, 0]);
    input.system = { ...input.system, params: { ...input.system.params, poleHalfLength: 1 } };
    const stage = trolley(input);
    // L = 2 · 1 = 2 m.
    expect(stage.mast.y0 - stage.mast.y1).toBeCloseTo(2 * stage.scale, 9);
  });

  it('shrinks the scale to fit a short canvas, keeping the upright mast below the title line', () => {
    const stage = trolley(trolleyInput([0, 0, 0, 0], 1, { width: 1600, height: 200 }));
    // Were the scale set by the width alone, the 1 m mast would be ~300 px: taller than the canvas.
    expect(stage.scale * 1).toBeLessThan(200);
    expect(stage.mast.y1).toBeGreaterThanOrEqual(26);
    expect(stage.rail.y).toBeLessThanOrEqual(200);
  });

  it('spans the angle-limit wedge −π/2 ± angleLimit, with the mast tip at +angleLimit on its edge', () => {
    const stage = trolley(trolleyInput([0, 0, ANGLE_LIMIT, 0]));
    const wedge = stage.wedge!;
    expect(wedge.from).toBeCloseTo(-Math.PI / 2 - ANGLE_LIMIT, 12);
    expect(wedge.to).toBeCloseTo(-Math.PI / 2 + ANGLE_LIMIT, 12);
    // The wedge's clockwise edge at radius r = mast length: (x + r cos(to), y + r sin(to))
    // = (x + r sin a, y − r cos a), which is the tip of a mast leaning at θ = a.
    expect(wedge.x + wedge.r * Math.cos(wedge.to)).toBeCloseTo(stage.mast.x1, 9);
    expect(wedge.y + wedge.r * Math.sin(wedge.to)).toBeCloseTo(stage.mast.y1, 9);
  });

  it('points the force arrow right for push right and left for push left', () => {
    const right = trolley(trolleyInput([0.5, 0, 0, 0], 1));
    expect(right.arrow!.direction).toBe(1);
    expect(right.arrow!.x1).toBeGreaterThan(right.arrow!.x0);
    // Centred under the trolley.
    expect((right.arrow!.x0 + right.arrow!.x1) / 2).toBeCloseTo(right.trolley.x, 9);

    const left = trolley(trolleyInput([0.5, 0, 0, 0], 0));
    expect(left.arrow!.direction).toBe(-1);
    expect(left.arrow!.x1).toBeLessThan(left.arrow!.x0);
  });

  it('reads the direction from the action names, not the index, when the names say', () => {
    const swapped = trolley(trolleyInput([0, 0, 0, 0], 0, { actions: ['push right', 'push left'] }));
    expect(swapped.arrow!.direction).toBe(1);
    // Names that say nothing: the cart-pole habit, action 0 = left.
    const plain = trolley(trolleyInput([0, 0, 0, 0], 0, { actions: ['a', 'b'] }));
    expect(plain.arrow!.direction).toBe(-1);
  });

  it('flags a fallen mast and a trolley off the rail', () => {
    // |θ| = 0.3 rad > 12° ≈ 0.2094 rad; |x| = 2.5 m > 2.4 m.
    expect(trolley(trolleyInput([0, 0, 0.3, 0])).failed).toEqual({ mast: true, rail: false });
    expect(trolley(trolleyInput([2.5, 0, 0, 0])).failed).toEqual({ mast: false, rail: true });
    expect(trolley(trolleyInput([0, 0, 0.1, 0])).failed).toEqual({ mast: false, rail: false });
  });

  it('names the action with greedy or explored on the title line', () => {
    const greedy = trolley(trolleyInput([0, 0, 0, 0], 1));
    expect(greedy.texts.find((t) => t.text === 'push right · greedy')?.tone).toBe('greedy');
    const explored = trolley(trolleyInput([0, 0, 0, 0], 1, { explored: true }));
    expect(explored.action.explored).toBe(true);
    expect(explored.texts.find((t) => t.text === 'push right · explored')?.tone).toBe('explored');
    expect(explored.texts.some((t) => t.text === '10 N · explored')).toBe(true);
  });
});

function roverInput(position: number, action = 1, over: Partial<StageInput> = {}): StageInput {
  return {
    system: {
      kind: 'mountain-car',
      title: 'crater rover',
      map: { position: 0, velocity: 1 },
      params: { minPosition: -1.2, maxPosition: 0.5, goalPosition: 0.5, maxSpeed: 0.07 },
    },
    stateDims: [
      { name: 'x', unit: 'm' },
      { name: 'v', unit: 'm/step' },
    ],
    actions: ['reverse', 'coast', 'forward'],
    state: [position, 0],
    action,
    explored: false,
    width: 600,
    height: 300,
    ...over,
  };
}

const rover = (input: StageInput) => {
  const stage = stageGeometry(input);
  expect(stage.kind).toBe('mountain-car');
  return stage as RoverStage;
};

describe('Stage: crater rover (mountain car)', () => {
  it('samples the crater floor over [minPosition, maxPosition] in 200 points', () => {
    const stage = rover(roverInput(-0.5));
    expect(stage.curve.length).toBe(400);
    // The rover at either end of the interval sits on the curve's first and last points.
    const first = rover(roverInput(-1.2));
    const last = rover(roverInput(0.5));
    expect(first.rover.x).toBeCloseTo(stage.curve[0], 9);
    expect(first.rover.y).toBeCloseTo(stage.curve[1], 9);
    expect(last.rover.x).toBeCloseTo(stage.curve[398], 9);
    expect(last.rover.y).toBeCloseTo(stage.curve[399], 9);
    // The left wall stands on the floor's first point and rises from it (smaller canvas y).
    expect(stage.wall.x).toBeCloseTo(stage.curve[0], 9);
    expect(stage.wall.y0).toBeCloseTo(stage.curve[1], 9);
    expect(stage.wall.y1).toBeLessThan(stage.wall.y0);
  });

  it('puts the rover at the goal on the flag', () => {
    const stage = rover(roverInput(0.5));
    expect(stage.rover.x).toBeCloseTo(stage.flag!.x, 9);
    expect(stage.rover.y).toBeCloseTo(stage.flag!.y0, 9);
    expect(stage.reachedGoal).toBe(true);
  });

  it('puts the rover at x = −π/6 at the lowest point of the crater, level', () => {
    // 3 · (−π/6) = −π/2, where sin(3x) = −1 is least and its slope 3·cos(−π/2) = 0.
    const stage = rover(roverInput(-Math.PI / 6));
    const ys = stage.curve.filter((_, i) => i % 2 === 1);
    const lowestOnScreen = Math.max(...ys);
    expect(stage.rover.y).toBeGreaterThanOrEqual(lowestOnScreen - 1e-9);
    // The 200 samples fall within a fraction of a pixel of the true bottom.
    expect(stage.rover.y - lowestOnScreen).toBeLessThan(0.05);
    expect(stage.rover.angle).toBeCloseTo(0, 12);
  });

  it('draws up as up: the rim at x = 0.5 is higher on screen than the left wall at x = −1.2', () => {
    // sin(1.5) ≈ 0.997 > sin(−3.6) ≈ 0.443, so the rim has the smaller canvas y.
    expect(rover(roverInput(0.5)).rover.y).toBeLessThan(rover(roverInput(-1.2)).rover.y);
  });

  it('tilts the rover to the floor slope measured in pixels', () => {
    // At x = −0.3, 3x = −0.9 and cos(−0.9) > 0: the floor rises to the right, so on screen the
    // rover turns counter-clockwise (negative screen angle). The angle is atan of the pixel
    // slope, checked here by a central difference of the rover's own contact points.
    const h = 1e-5;
    const at = rover(roverInput(-0.3));
    const before = rover(roverInput(-0.3 - h));
    const after = rover(roverInput(-0.3 + h));
    const slope = (after.rover.y - before.rover.y) / (after.rover.x - before.rover.x);
    expect(at.rover.angle).toBeLessThan(0);
    expect(at.rover.angle).toBeCloseTo(Math.atan(slope), 6);
  });

  it('thrusts along the slope: forward toward +x, reverse toward −x, coast without an arrow', () => {
    const forward = rover(roverInput(-0.3, 2));
    const arrow = forward.arrow!;
    expect(arrow.direction).toBe(1);
    expect(arrow.x1).toBeGreaterThan(arrow.x0);
    // Parallel to the rover: rise over run of the arrow is tan(angle).
    expect((arrow.y1 - arrow.y0) / (arrow.x1 - arrow.x0)).toBeCloseTo(Math.tan(forward.rover.angle), 9);

    const reverse = rover(roverInput(-0.3, 0));
    expect(reverse.arrow!.direction).toBe(-1);
    expect(reverse.arrow!.x1).toBeLessThan(reverse.arrow!.x0);

    expect(rover(roverInput(-0.3, 1)).arrow).toBeNull();
  });

  it('finds the exact range of sin, troughs and crests included', () => {
    // [3·(−1.2), 3·0.5] = [−3.6, 1.5] holds the trough −π/2 but not the crest π/2 ≈ 1.571.
    expect(sinRange(-3.6, 1.5)).toEqual([-1, Math.sin(1.5)]);
    expect(sinRange(0, 2 * Math.PI)).toEqual([-1, 1]);
    expect(sinRange(0.1, 0.2)).toEqual([Math.sin(0.1), Math.sin(0.2)]);
  });
});

function gaugeInput(state: number[], over: Partial<StageInput> = {}): StageInput {
  return {
    system: { kind: 'tank-level', map: {}, params: { levelMin: -2, levelMax: 2 } },
    stateDims: [
      { name: 'level', unit: 'm' },
      { name: 'inflow', unit: 'L/s' },
    ],
    actions: ['close valve', 'open valve'],
    state,
    action: 1,
    explored: false,
    width: 500,
    height: 200,
    ranges: [
      { min: -5, max: 5 },
      { min: 0, max: 10 },
    ],
    ...over,
  };
}

const gauges = (input: StageInput) => {
  const stage = stageGeometry(input);
  expect(stage.kind).toBe('gauges');
  return stage as GaugeStage;
};

describe('Stage: gauges for any other control system', () => {
  it('places the range min at the left of the track and max at the right', () => {
    // level's range comes from params (levelMin/levelMax = −2/2), ahead of the episode's −5/5.
    const low = gauges(gaugeInput([-2, 0]));
    expect(low.gauges[0].rangeSource).toBe('params');
    expect(low.gauges[0].marker!.x).toBeCloseTo(low.gauges[0].track.x0, 9);
    // inflow has no params: the episode's own range, 0 … 10.
    expect(low.gauges[1].rangeSource).toBe('episode');
    expect(low.gauges[1].marker!.x).toBeCloseTo(low.gauges[1].track.x0, 9);

    const high = gauges(gaugeInput([2, 10]));
    expect(high.gauges[0].marker!.x).toBeCloseTo(high.gauges[0].track.x1, 9);
    expect(high.gauges[1].marker!.x).toBeCloseTo(high.gauges[1].track.x1, 9);

    // 5 is half-way through 0 … 10, so half-way along the track.
    const middle = gauges(gaugeInput([0, 5]));
    const track = middle.gauges[1].track;
    expect(middle.gauges[1].marker!.x).toBeCloseTo((track.x0 + track.x1) / 2, 9);
  });

  it('pins a value past its range to that end and says so', () => {
    const stage = gauges(gaugeInput([3, -1]));
    expect(stage.gauges[0].clipped).toBe(1);
    expect(stage.gauges[0].marker!.x).toBeCloseTo(stage.gauges[0].track.x1, 9);
    expect(stage.gauges[1].clipped).toBe(-1);
    expect(stage.gauges[0].valueText).toBe('3');
  });

  it('shows a NaN state as NaN, never as a number', () => {
    const stage = gauges(gaugeInput([Number.NaN, Number.POSITIVE_INFINITY]));
    expect(stage.gauges[0].nonFinite).toBe(true);
    expect(stage.gauges[0].valueText).toBe('NaN');
    expect(stage.gauges[0].marker).toBeNull();
    expect(stage.gauges[1].nonFinite).toBe(true);
    expect(stage.gauges[1].valueText).toBe('Infinity');
    expect(stage.texts.find((t) => t.text === 'NaN')?.tone).toBe('alarm');
  });

  it('falls back to gauges for a cart-pole state with NaN, and for a header missing params', () => {
    const broken = gauges(trolleyInput([0, 0, Number.NaN, 0]));
    expect(broken.gauges[2].nonFinite).toBe(true);
    expect(broken.gauges[2].valueText).toBe('NaN');
    expect(broken.note).toMatch(/non-finite/);

    const bare = trolleyInput([0, 0, 0, 0]);
    bare.system = { kind: 'cart-pole', map: bare.system.map };
    expect(gauges(bare).note).toMatch(/railHalfLength/);

    const unmapped = roverInput(-0.5);
    unmapped.system = { ...unmapped.system, map: {} };
    expect(gauges(unmapped).note).toMatch(/position/);
  });

  it('gives a range even with none from params or the episode, and opens a zero-width one', () => {
    const none = gauges(gaugeInput([0, 3], { ranges: undefined }));
    expect(none.gauges[1].rangeSource).toBe('none');
    expect(none.gauges[1].range).toEqual({ min: -3, max: 3 });
    const flat = gauges(gaugeInput([0, 4], { ranges: [undefined, { min: 4, max: 4 }] }));
    expect(flat.gauges[1].range).toEqual({ min: 2, max: 6 });
  });

  it('names an action index the header does not list', () => {
    const stage = gauges(gaugeInput([0, 0], { action: 7 }));
    expect(stage.action.name).toBe('action 7');
  });
});

describe('Stage text helpers', () => {
  it('formats numbers to four significant digits and spells out non-finite values', () => {
    expect(formatValue(2.4)).toBe('2.4');
    expect(formatValue(-0.0123456)).toBe('-0.01235');
    expect(formatValue(Number.NaN)).toBe('NaN');
    expect(formatValue(Number.NEGATIVE_INFINITY)).toBe('-Infinity');
    expect(formatValue(0)).toBe('0');
  });

  it('reads directions from whole words of an action name', () => {
    expect(directionFromName('push left')).toBe(-1);
    expect(directionFromName('forward')).toBe(1);
    expect(directionFromName('coast')).toBe(0);
    expect(directionFromName('upright')).toBeUndefined();
  });
});

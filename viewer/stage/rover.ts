/**
 * The crater rover (mountain car) in pixels. The crater floor is y = sin(k·x) with k = 3
 * (Sutton & Barto 2018, Example 10.1; the dynamics' −0.0025·cos(3x) term is that curve's slope),
 * taken from params.hillFrequency when the header gives it. Up is up: larger y is drawn higher,
 * so canvas y = bottom − (y − lowest)·sy.
 */

import { actionMark, directionFromName, formatValue, keyOf, param, roleIndex, TITLE_BAND, titleTexts } from './common.ts';
import type { Arrow, Point, RoverStage, StageInput, StageText } from './types.ts';

const CURVE_POINTS = 200;
const SIDE = 28;
/** Above the crater: room for the flag, and for the rover, its thrust arrow and label on the rim. */
const ABOVE_CRATER = 42;
const BELOW_CRATER = 20;
const FLAG_H = 30;
const WHEEL_R = 3;

export interface RoverValues {
  position: number;
  minPosition: number;
  maxPosition: number;
  goalPosition: number | undefined;
  hillFrequency: number;
}

export function roverStage(input: StageInput, values: RoverValues): RoverStage {
  const width = Math.max(1, input.width);
  const height = Math.max(1, input.height);
  const { position, minPosition, maxPosition, goalPosition, hillFrequency: k } = values;

  // x: [minPosition, maxPosition] across the width; y: the floor's exact lowest and highest
  // heights on that interval between the title band and the ground. The two scales differ (the
  // crater is drawn stretched), which is why the tilt is measured in pixel space below.
  const sx = (width - 2 * SIDE) / (maxPosition - minPosition);
  const [lowest, highest] = sinRange(k * minPosition, k * maxPosition);
  const floorBottom = height - BELOW_CRATER;
  const floorTop = TITLE_BAND + ABOVE_CRATER;
  const sy = Math.max(0, floorBottom - floorTop) / Math.max(highest - lowest, 1e-9);
  const toX = (x: number) => SIDE + (x - minPosition) * sx;
  const toY = (x: number) => floorBottom - (Math.sin(k * x) - lowest) * sy;

  const curve: number[] = [];
  for (let i = 0; i < CURVE_POINTS; i++) {
    const x = minPosition + ((maxPosition - minPosition) * i) / (CURVE_POINTS - 1);
    curve.push(toX(x), toY(x));
  }

  // Tilt: the floor's slope d(sin kx)/dx = k·cos(kx), in pixels: dY/dX = −sy·k·cos(kx) / sx (the
  // minus because canvas y grows down). atan of it is a screen rotation (clockwise positive).
  const contact = { x: toX(position), y: toY(position) };
  const angle = Math.atan2(-sy * k * Math.cos(k * position), sx);
  const along = { x: Math.cos(angle), y: Math.sin(angle) };
  const up = { x: Math.sin(angle), y: -Math.cos(angle) };
  const at = (base: Point, a: number, u: number): Point => ({
    x: base.x + along.x * a + up.x * u,
    y: base.y + along.y * a + up.y * u,
  });

  const w = Math.min(36, Math.max(18, 0.05 * width));
  const h = w / 2;
  const corners = [at(contact, -w / 2, 2 * WHEEL_R), at(contact, w / 2, 2 * WHEEL_R), at(contact, w / 2, 2 * WHEEL_R + h), at(contact, -w / 2, 2 * WHEEL_R + h)];

  const mark = actionMark(input);
  const throttle = throttleOf(mark.index, mark.name, input.actions.length);
  const texts: StageText[] = titleTexts(input, mark);
  let arrow: Arrow | null = null;
  if (throttle !== 0) {
    const middle = at(contact, 0, 2 * WHEEL_R + h + 10);
    const tail = at(middle, (-throttle * w) / 2, 0);
    const head = at(middle, (throttle * w) / 2, 0);
    arrow = { x0: tail.x, y0: tail.y, x1: head.x, y1: head.y, direction: throttle };
    if (mark.explored) {
      // Above the arrow's higher end (the text stays level while the arrow tilts).
      texts.push({ text: 'explored', x: middle.x, y: Math.min(tail.y, head.y) - 7, anchorX: 0.5, anchorY: 1, tone: 'explored', size: 'small' });
    }
  }
  for (const x of [minPosition, maxPosition]) {
    texts.push({ text: `${formatValue(x)} m`, x: toX(x), y: floorBottom + 4, anchorX: 0.5, anchorY: 0, tone: 'faint', size: 'small', mono: true });
  }

  let flag: RoverStage['flag'] = null;
  if (goalPosition !== undefined) {
    const x = toX(goalPosition);
    const y0 = toY(goalPosition);
    const y1 = y0 - FLAG_H;
    flag = { x, y0, y1, cloth: [x, y1, x + 14, y1 + 5, x, y1 + 10] };
  }

  return {
    kind: 'mountain-car',
    width,
    height,
    action: mark,
    texts,
    layoutKey: keyOf('mountain-car', width, height, minPosition, maxPosition, goalPosition, k),
    curve,
    groundY: height,
    // At minPosition the dynamics stop the rover dead (x is clamped and v set to 0): a wall.
    wall: { x: toX(minPosition), y0: toY(minPosition), y1: floorTop },
    rover: { x: contact.x, y: contact.y, angle, w, h, body: corners.flatMap((p) => [p.x, p.y]) },
    wheels: { points: [at(contact, -0.3 * w, WHEEL_R), at(contact, 0.3 * w, WHEEL_R)], r: WHEEL_R },
    flag,
    arrow,
    reachedGoal: goalPosition !== undefined && position >= goalPosition,
  };
}

/**
 * sin over [a, b] (in either order): its lowest and highest values, exactly. The ends, plus
 * −1 if a trough −π/2 + 2nπ lies inside and +1 if a crest π/2 + 2nπ does; sampling would miss the
 * true bottom by a fraction of a pixel.
 */
export function sinRange(a: number, b: number): [number, number] {
  const lo = Math.min(a, b);
  const hi = Math.max(a, b);
  const contains = (phase: number) => Math.floor((hi - phase) / (2 * Math.PI)) >= Math.ceil((lo - phase) / (2 * Math.PI));
  const ends = [Math.sin(lo), Math.sin(hi)];
  return [contains(-Math.PI / 2) ? -1 : Math.min(...ends), contains(Math.PI / 2) ? 1 : Math.max(...ends)];
}

/**
 * Throttle −1 / 0 / +1 for an action: from its name ('reverse' / 'coast' / 'forward'), else the
 * mountain-car habit of three actions meaning −1, 0, +1 in order (two: −1, +1).
 */
function throttleOf(index: number, name: string, count: number): -1 | 0 | 1 {
  const named = directionFromName(name);
  if (named !== undefined) return named;
  if (count === 3 && index >= 0 && index <= 2) return (index - 1) as -1 | 0 | 1;
  if (count === 2) return index === 0 ? -1 : index === 1 ? 1 : 0;
  return 0;
}

/** The rover's numbers from the header and the state, or why they cannot be had. */
export function roverValues(input: StageInput): RoverValues | string {
  const positionIndex = roleIndex(input, 'position');
  const minPosition = param(input, 'minPosition');
  const maxPosition = param(input, 'maxPosition');
  if (minPosition === undefined || maxPosition === undefined || !(maxPosition > minPosition)) {
    return 'mountain-car header lacks params.minPosition < params.maxPosition';
  }
  if (positionIndex === undefined) return 'mountain-car header does not map position';
  const position = input.state[positionIndex];
  if (!Number.isFinite(position)) return 'non-finite state: shown as gauges';
  return {
    position,
    minPosition,
    maxPosition,
    goalPosition: param(input, 'goalPosition'),
    hillFrequency: param(input, 'hillFrequency') ?? 3,
  };
}

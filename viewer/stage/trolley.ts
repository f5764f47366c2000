/**
 * The balancing trolley (cart-pole) in pixels. Conventions follow src/envs/cartpole.ts: x grows to
 * the right, F > 0 pushes right, θ = 0 is upright and θ > 0 leans toward +x. On screen y grows
 * DOWN, so the mast tip is at pivot + L·scale·(sin θ, −cos θ): the minus puts "up" at smaller y.
 */

import { actionMark, clamp, directionFromName, formatValue, keyOf, param, roleIndex, SIDE_MARGIN, TITLE_BAND, titleTexts } from './common.ts';
import type { StageInput, StageText, TrolleyStage } from './types.ts';

/** The trolley body in metres; only for drawing (the physics treats the trolley as a point). */
const BODY_W = 0.5;
const BODY_H = 0.25;
const WHEEL_R = 4;
/** Below the rail: the limit labels, then the push arrow and its label. */
const BELOW_RAIL = 58;
const ABOVE_MAST = 8;
const LIMIT_TICK = 10;

export interface TrolleyValues {
  position: number;
  angle: number;
  railHalfLength: number;
  poleHalfLength: number;
  angleLimit: number | undefined;
  force: number | undefined;
}

export function trolleyStage(input: StageInput, values: TrolleyValues): TrolleyStage {
  const width = Math.max(1, input.width);
  const height = Math.max(1, input.height);
  const { position, angle, railHalfLength, poleHalfLength, angleLimit, force } = values;
  const mastLength = 2 * poleHalfLength;

  // One px/m scale for both axes. Across: the whole rail plus half a trolley past each end, so a
  // trolley at the very end still fits. Down: mast + body + wheels between the title and the band
  // under the rail. The smaller wins, so the drawing always fits.
  const byWidth = (width - 2 * SIDE_MARGIN) / (2 * railHalfLength + BODY_W);
  const spareHeight = height - TITLE_BAND - ABOVE_MAST - BELOW_RAIL - 2 * WHEEL_R;
  const byHeight = spareHeight / (mastLength + BODY_H);
  const scale = Math.max(0.01, Math.min(byWidth, byHeight));

  const centreX = width / 2;
  const toPx = (metres: number) => centreX + metres * scale;
  // With a width-limited scale there is height to spare: centre the drawing in it.
  const drawingHeight = (mastLength + BODY_H) * scale + 2 * WHEEL_R;
  const spare = Math.max(0, height - TITLE_BAND - ABOVE_MAST - BELOW_RAIL - drawingHeight);
  const railY = height - BELOW_RAIL - spare / 2;

  const bodyW = BODY_W * scale;
  const bodyH = BODY_H * scale;
  const trolleyX = toPx(position);
  const bodyBottom = railY - 2 * WHEEL_R;
  const pivotY = bodyBottom - bodyH;
  const mastPx = mastLength * scale;

  const mark = actionMark(input);
  const direction = pushDirection(mark.index, mark.name, force);
  const texts: StageText[] = titleTexts(input, mark);

  const rail = { x0: toPx(-railHalfLength), x1: toPx(railHalfLength), y: railY };
  const limits = [rail.x0, rail.x1].map((x) => ({ x, y0: railY - LIMIT_TICK, y1: railY + LIMIT_TICK }));
  for (const [i, x] of [rail.x0, rail.x1].entries()) {
    const metres = i === 0 ? -railHalfLength : railHalfLength;
    texts.push({ text: `${formatValue(metres)} m`, x, y: railY + LIMIT_TICK + 2, anchorX: 0.5, anchorY: 0, tone: 'faint', size: 'small', mono: true });
  }

  const arrowY = railY + 32;
  const arrow =
    direction === 0
      ? null
      : { x0: trolleyX - (direction * bodyW) / 2, y0: arrowY, x1: trolleyX + (direction * bodyW) / 2, y1: arrowY, direction };
  const arrowLabel = [force === undefined ? '' : `${formatValue(Math.abs(force))} N`, mark.explored ? 'explored' : '']
    .filter((part) => part !== '')
    .join(' · ');
  if (arrowLabel !== '') {
    texts.push({ text: arrowLabel, x: clamp(trolleyX, SIDE_MARGIN, width - SIDE_MARGIN), y: arrowY + 9, anchorX: 0.5, anchorY: 0, tone: mark.explored ? 'explored' : 'greedy', size: 'small' });
  }

  return {
    kind: 'cart-pole',
    width,
    height,
    action: mark,
    texts,
    layoutKey: keyOf('cart-pole', width, height, railHalfLength, mastLength),
    scale,
    rail,
    limits,
    trolley: { x: trolleyX, y: bodyBottom - bodyH / 2, w: bodyW, h: bodyH },
    wheels: { points: [-0.3, 0.3].map((f) => ({ x: trolleyX + f * bodyW, y: railY - WHEEL_R })), r: WHEEL_R },
    mast: { x0: trolleyX, y0: pivotY, x1: trolleyX + mastPx * Math.sin(angle), y1: pivotY - mastPx * Math.cos(angle) },
    // Screen angle of the mast: upright is −π/2 (straight up in y-down coordinates) and θ > 0
    // turns it clockwise on screen, toward +x; so the allowed slice is −π/2 ± angleLimit.
    wedge:
      angleLimit === undefined
        ? null
        : { x: trolleyX, y: pivotY, r: mastPx, from: -Math.PI / 2 - angleLimit, to: -Math.PI / 2 + angleLimit },
    arrow,
    failed: {
      mast: angleLimit !== undefined && Math.abs(angle) > angleLimit,
      rail: Math.abs(position) > railHalfLength,
    },
  };
}

/**
 * Which way the action pushes: from its name when the name says ('push left' / 'push right'),
 * else the cart-pole habit of action 0 = left, 1 = right; a negative `force` param flips it.
 */
function pushDirection(index: number, name: string, force: number | undefined): -1 | 0 | 1 {
  const named = directionFromName(name);
  const byIndex = index === 0 ? -1 : index === 1 ? 1 : 0;
  const side = named ?? byIndex;
  if (force === undefined) return side;
  return (side * Math.sign(force)) as -1 | 0 | 1;
}

/** The trolley's numbers from the header and the state, or why they cannot be had. */
export function trolleyValues(input: StageInput): TrolleyValues | string {
  const positionIndex = roleIndex(input, 'position');
  const angleIndex = roleIndex(input, 'angle');
  const railHalfLength = param(input, 'railHalfLength');
  const poleHalfLength = param(input, 'poleHalfLength');
  if (railHalfLength === undefined || railHalfLength <= 0) return 'cart-pole header lacks params.railHalfLength';
  if (poleHalfLength === undefined || poleHalfLength <= 0) return 'cart-pole header lacks params.poleHalfLength';
  if (positionIndex === undefined || angleIndex === undefined) return 'cart-pole header does not map position and angle';
  const position = input.state[positionIndex];
  const angle = input.state[angleIndex];
  if (!Number.isFinite(position) || !Number.isFinite(angle)) return 'non-finite state: shown as gauges';
  const angleLimit = param(input, 'angleLimit');
  return { position, angle, railHalfLength, poleHalfLength, angleLimit, force: param(input, 'force') };
}

/**
 * The Stage's geometry: from the header's control-system spec and one step, everything to draw,
 * in canvas pixels. Pure functions (no Pixi, no DOM) so the drawing's facts can be tested in Node.
 *
 * A kind episcope knows is drawn as its physical system; anything else, or a header missing
 * what the drawing needs, or a state with a non-finite value where the drawing needs a number,
 * becomes one gauge per state dimension, so nothing the file holds is ever silently left out.
 */

import { gaugeStage } from './gauges.ts';
import { roverStage, roverValues } from './rover.ts';
import { trolleyStage, trolleyValues } from './trolley.ts';
import type { StageGeometry, StageInput } from './types.ts';

export function stageGeometry(input: StageInput): StageGeometry {
  switch (input.system.kind) {
    case 'cart-pole': {
      const values = trolleyValues(input);
      return typeof values === 'string' ? gaugeStage(input, values) : trolleyStage(input, values);
    }
    case 'mountain-car': {
      const values = roverValues(input);
      return typeof values === 'string' ? gaugeStage(input, values) : roverStage(input, values);
    }
    default:
      return gaugeStage(input);
  }
}

export { gaugeStage, gaugeRange } from './gauges.ts';
export { roverStage, sinRange } from './rover.ts';
export { trolleyStage } from './trolley.ts';
export { formatValue, directionFromName } from './common.ts';
export type * from './types.ts';

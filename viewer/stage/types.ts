/**
 * What the Stage draws, in canvas pixels (x to the right, y DOWN, as on screen). The geometry
 * modules fill these plain records from the header and one step; draw.ts only paints them. Keeping
 * every number here means the drawing can be checked in Node without a canvas.
 */

import type { ControlSystemSpec, StateDimSpec } from '../../formats/types.ts';

export interface Range {
  min: number;
  max: number;
}

export interface StageInput {
  system: ControlSystemSpec;
  stateDims: readonly StateDimSpec[];
  actions: readonly string[];
  /** The state vector at the current step, in stateDims order. */
  state: ArrayLike<number>;
  action: number;
  /** True when the action was an ε-greedy random pick rather than the greedy one. */
  explored: boolean;
  /** Canvas size in CSS pixels. */
  width: number;
  height: number;
  /** Per state dimension, the episode's own min/max: the gauges' range when the header gives none. */
  ranges?: readonly (Range | null | undefined)[];
}

export interface Point {
  x: number;
  y: number;
}

/** Which palette entry a text or mark takes; draw.ts maps these onto theme.ts. */
export type Tone = 'ink' | 'soft' | 'faint' | 'greedy' | 'explored' | 'alarm';

export interface StageText {
  text: string;
  x: number;
  y: number;
  /** Pixi-style anchor: 0 = left/top, 0.5 = centre, 1 = right/bottom. */
  anchorX: number;
  anchorY: number;
  tone: Tone;
  size: 'small' | 'body';
  /** Numbers are set in the monospace face so they do not jitter while scrubbing. */
  mono?: boolean;
}

/** The action taken at this step, as every kind of Stage reports it. */
export interface ActionMark {
  index: number;
  name: string;
  explored: boolean;
}

interface StageCommon {
  width: number;
  height: number;
  action: ActionMark;
  texts: StageText[];
  /**
   * Changes only when the parts that do not move (rail, crater, gauge tracks) change, so a redraw
   * can keep them and repaint just the moving parts.
   */
  layoutKey: string;
  /** Why the Stage fell back to gauges, when it did. */
  note?: string;
}

/** A push or thrust: tail (x0, y0) to head (x1, y1). */
export interface Arrow {
  x0: number;
  y0: number;
  x1: number;
  y1: number;
  /** −1 toward −x, +1 toward +x of the physical system. */
  direction: -1 | 1;
}

export interface TrolleyStage extends StageCommon {
  kind: 'cart-pole';
  /** Pixels per metre, the same along x and y so the mast keeps its true length against the rail. */
  scale: number;
  rail: { x0: number; x1: number; y: number };
  /** The rail ends, ±railHalfLength: a tick across the rail at each. */
  limits: { x: number; y0: number; y1: number }[];
  /** (x, y) is the centre of the body box. */
  trolley: { x: number; y: number; w: number; h: number };
  wheels: { points: Point[]; r: number };
  /** From the pivot (x0, y0) on the trolley's top to the tip (x1, y1). */
  mast: { x0: number; y0: number; x1: number; y1: number };
  /**
   * The angles the mast may take, ±angleLimit about upright, as a pie slice at the pivot. `from` and
   * `to` are screen angles (clockwise from +x, because y grows down), ready for an arc.
   */
  wedge: { x: number; y: number; r: number; from: number; to: number } | null;
  /** The push for the action; null when the action's direction is unknown. */
  arrow: Arrow | null;
  failed: { mast: boolean; rail: boolean };
}

export interface RoverStage extends StageCommon {
  kind: 'mountain-car';
  /** The crater floor as a polyline: x0, y0, x1, y1, … */
  curve: number[];
  /** The canvas y under the crater, for filling the ground. */
  groundY: number;
  /** The crater's left wall, from the floor's end (y0) up to y1. */
  wall: { x: number; y0: number; y1: number };
  /** (x, y) is where the rover touches the floor; angle is its tilt as a screen rotation. */
  rover: { x: number; y: number; angle: number; w: number; h: number; body: number[] };
  wheels: { points: Point[]; r: number };
  flag: { x: number; y0: number; y1: number; cloth: number[] } | null;
  /** Thrust along the floor's slope; null for coast. */
  arrow: Arrow | null;
  reachedGoal: boolean;
}

export interface Gauge {
  name: string;
  unit: string;
  value: number;
  valueText: string;
  nonFinite: boolean;
  range: Range;
  /** Where the range came from: the header's params, the episode's min/max, or neither. */
  rangeSource: 'params' | 'episode' | 'none';
  track: { x0: number; x1: number; y: number };
  /** The value's place on the track; null when the value is not a number. */
  marker: Point | null;
  /** −1 below the range, +1 above it (the marker then sits at that end), 0 inside. */
  clipped: -1 | 0 | 1;
}

export interface GaugeStage extends StageCommon {
  kind: 'gauges';
  gauges: Gauge[];
}

export type StageGeometry = TrolleyStage | RoverStage | GaugeStage;

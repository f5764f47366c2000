/**
 * What the Lanes are given: one LaneSpec per lane, one SeriesSpec per line in it. The arrays are
 * the step columns themselves (never copied, never one object per step); a series of a row-major
 * table such as Q (N steps × A actions) is read at `values[offset + step·stride]`.
 */

export interface SeriesSpec {
  name: string;
  /** At least `offset + (n − 1)·stride + 1` values for an episode of n steps. */
  values: Float32Array | Float64Array;
  /** Values per step in `values` (A for a Q table); 1 if omitted. */
  stride?: number;
  /** Which value of each step (the action, for a Q table); 0 if omitted. */
  offset?: number;
  colour: string;
  /** 1 at steps where the line is drawn thicker, e.g. where this action is the greedy one. */
  emphasis?: Uint8Array;
  /** Dashed, for a reference series such as the realised return. */
  dashed?: boolean;
  /** Shade between the line and zero, so the sign reads at a glance (TD error, reward). */
  fill?: boolean;
}

export interface LaneSpec {
  id: string;
  title: string;
  unit?: string;
  series: SeriesSpec[];
  /** Draw the y = 0 rule stronger than the grid. */
  zeroLine?: boolean;
  /** Lane height in CSS px; 88 if omitted. */
  height?: number;
}

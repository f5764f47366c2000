/** Where the Ruler's marks go, as step rows. Pure, so the marks can be checked without a browser. */
import type { WeightsRun } from '../../formats/types.ts';

/** Rows where the greedy action differs from the previous row's. */
export function flipRows(flips: Uint8Array): number[] {
  const rows: number[] = [];
  for (let r = 1; r < flips.length; r++) if (flips[r]) rows.push(r);
  return rows;
}

/** Rows at which the target weights in force change within the episode. */
export function syncRows(weights: readonly WeightsRun[]): number[] {
  const rows: number[] = [];
  for (let i = 1; i < weights.length; i++) if (weights[i][2] !== weights[i - 1][2]) rows.push(weights[i][0]);
  return rows;
}

export const rowToX = (row: number, n: number, width: number) => (n <= 1 ? 0 : (row / (n - 1)) * width);
export const xToRow = (x: number, n: number, width: number) => (n <= 1 ? 0 : Math.round((Math.max(0, Math.min(width, x)) / width) * (n - 1)));

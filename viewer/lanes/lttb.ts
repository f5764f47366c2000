/**
 * Largest-Triangle-Three-Buckets: Steinarsson (2013), "Downsampling time series for visual
 * representation", MSc thesis, University of Iceland. For a fixed budget of points (an export, a
 * thumbnail); the Lanes themselves use M4 per pixel column (`decimate.ts`).
 */
import type { Values } from './decimate.ts';

/**
 * Largest-Triangle-Three-Buckets (Steinarsson 2013), in the bucket convention of the
 * author's reference implementation: the first and last points are kept; the N − 2 points between
 * form `threshold − 2` buckets of width every = (N − 2)/(threshold − 2), bucket i spanning
 * indices [⌊i·every⌋ + 1, ⌊(i + 1)·every⌋ + 1); from each bucket the point kept is the one making
 * the largest triangle with the point kept before it and the average of the next bucket (the last
 * point, for the last bucket).
 *
 * Returns the indices kept, ascending. Pinned edges: threshold 0 or ≥ N keeps every index (as the
 * reference does); threshold 1 or 2 keeps the first and last (the reference's result for 2, and
 * the least that still spans the series). Non-finite values are the caller's to handle: a NaN
 * makes a triangle's area NaN, which never wins.
 */
export function lttb(xs: Values, ys: Values, threshold: number): Uint32Array {
  const n = xs.length;
  if (ys.length !== n) throw new RangeError(`lttb: xs holds ${n} values but ys holds ${ys.length}`);
  if (!Number.isInteger(threshold) || threshold < 0) throw new RangeError(`lttb: threshold must be an integer ≥ 0, got ${threshold}`);
  if (threshold === 0 || threshold >= n) {
    const all = new Uint32Array(n);
    for (let i = 0; i < n; i++) all[i] = i;
    return all;
  }
  if (threshold < 3) return Uint32Array.of(0, n - 1);
  const kept = new Uint32Array(threshold);
  const every = (n - 2) / (threshold - 2);
  let a = 0;
  let k = 0;
  kept[k++] = 0;
  for (let i = 0; i < threshold - 2; i++) {
    // Average of the next bucket: the third corner of the triangle.
    const avgStart = Math.floor((i + 1) * every) + 1;
    const avgEnd = Math.min(Math.floor((i + 2) * every) + 1, n);
    let avgX = 0, avgY = 0;
    for (let j = avgStart; j < avgEnd; j++) { avgX += xs[j]; avgY += ys[j]; }
    const avgLen = avgEnd - avgStart;
    avgX /= avgLen;
    avgY /= avgLen;

    const rangeStart = Math.floor(i * every) + 1;
    const rangeEnd = Math.floor((i + 1) * every) + 1;
    const ax = xs[a], ay = ys[a];
    let maxArea = -1;
    let chosen = rangeStart;
    for (let j = rangeStart; j < rangeEnd; j++) {
      // Twice the triangle's area; the factor ½ does not change which point wins.
      const area = Math.abs((ax - avgX) * (ys[j] - ay) - (ax - xs[j]) * (avgY - ay));
      if (area > maxArea) { maxArea = area; chosen = j; }
    }
    kept[k++] = chosen;
    a = chosen;
  }
  kept[k++] = n - 1;
  return kept;
}

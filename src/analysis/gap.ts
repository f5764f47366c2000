/**
 * Action gap (Bellemare et al. 2016): the best Q-value minus the second best, per step, over the
 * finite values; NaN where fewer than two are finite. A gap shrinking towards zero means the
 * greedy choice hangs on noise, which is when greedy flips start.
 */
export function actionGaps(q: Float32Array, actionCount: number, out = new Float32Array(Math.floor(q.length / actionCount))): Float32Array {
  const n = out.length;
  for (let t = 0; t < n; t++) {
    let best = -Infinity;
    let second = -Infinity;
    let finite = 0;
    for (let a = 0; a < actionCount; a++) {
      const v = q[t * actionCount + a];
      if (v - v !== 0) continue;
      finite++;
      if (v > best) {
        second = best;
        best = v;
      } else if (v > second) second = v;
    }
    out[t] = finite >= 2 ? best - second : NaN;
  }
  return out;
}

/** max_a Q(s_t, a) over finite values; NaN when none is finite. */
export function maxQ(q: Float32Array, actionCount: number, out = new Float32Array(Math.floor(q.length / actionCount))): Float32Array {
  for (let t = 0; t < out.length; t++) {
    let best = -Infinity;
    for (let a = 0; a < actionCount; a++) {
      const v = q[t * actionCount + a];
      if (v - v === 0 && v > best) best = v;
    }
    out[t] = best === -Infinity ? NaN : best;
  }
  return out;
}

/**
 * Greedy actions and their flips, over Q stored row-major N×A.
 * The greedy action is the index of the largest finite Q (the first such on ties, common practice
 * as in argmax). A row with no finite Q has no greedy action (−1): NaN is evidence, not an answer.
 */

export function greedyActions(q: Float32Array, actionCount: number): Int32Array {
  const n = Math.floor(q.length / actionCount);
  const out = new Int32Array(n);
  for (let t = 0; t < n; t++) {
    let best = -1;
    let bestQ = -Infinity;
    const row = t * actionCount;
    for (let a = 0; a < actionCount; a++) {
      const v = q[row + a];
      if (v - v === 0 && (best < 0 || v > bestQ)) {
        best = a;
        bestQ = v;
      }
    }
    out[t] = best;
  }
  return out;
}

/**
 * flips[t] = 1 when step t's greedy action differs from step t−1's (both defined). Step 0 never flips.
 */
export function greedyFlips(greedy: Int32Array): Uint8Array {
  const flips = new Uint8Array(greedy.length);
  for (let t = 1; t < greedy.length; t++) {
    flips[t] = greedy[t] >= 0 && greedy[t - 1] >= 0 && greedy[t] !== greedy[t - 1] ? 1 : 0;
  }
  return flips;
}

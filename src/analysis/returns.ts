/**
 * Monte Carlo returns to the end of the episode (Sutton & Barto 2018, eq. 3.9):
 *   G_t = R_{t+1} + γ G_{t+1},  G_T = 0.
 * Row t's reward is R_{t+1} (the reward for the step's action). For an episode cut off by a time
 * limit the sum stops at the cut, so G_t is a lower horizon, not the return the agent would have had.
 */
export function discountedReturns(rewards: Float32Array | Float64Array | number[], gamma: number, out = new Float64Array(rewards.length)): Float64Array {
  let g = 0;
  for (let t = rewards.length - 1; t >= 0; t--) {
    g = rewards[t] + gamma * g;
    out[t] = g;
  }
  return out;
}

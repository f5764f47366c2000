/**
 * Huber loss (Huber 1964): ρ(δ) = ½δ² for |δ| ≤ k, else k(|δ| − ½k). With k = 1 its gradient is
 * the TD error clipped to [−1, 1], the clip of Mnih et al. (2015).
 */
export function huber(delta: number, k = 1): number {
  const a = Math.abs(delta);
  return a <= k ? 0.5 * delta * delta : k * (a - 0.5 * k);
}

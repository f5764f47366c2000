/**
 * The shortest decimal that reads back as the same float32. A float32 widened to float64 prints
 * with up to 17 digits (0.1f → 0.10000000149011612); 9 significant digits always round-trip a
 * float32, and fewer usually do. Finite values only: callers name NaN and infinities their own way.
 */
export function shortestFloat32(v: number): string {
  const f = Math.fround(v);
  for (let p = 1; p < 9; p++) {
    const s = Number(f.toPrecision(p));
    if (Math.fround(s) === f) return String(s);
  }
  return String(Number(f.toPrecision(9)));
}

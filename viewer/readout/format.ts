/** Numbers for the Readout: exact enough to check by hand, non-finite values named, never hidden. */
export function fmtNumber(v: number | null | undefined, digits = 4): string {
  if (v === null || v === undefined) return '–';
  if (Number.isNaN(v)) return 'NaN';
  if (v === Infinity) return '+∞';
  if (v === -Infinity) return '−∞';
  const a = Math.abs(v);
  if (a !== 0 && (a >= 1e6 || a < 1e-4)) return v.toExponential(3);
  return v.toFixed(digits);
}

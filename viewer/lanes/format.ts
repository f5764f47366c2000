/**
 * Text for the Lanes: tick labels (as few digits as the spacing needs) and readout values (exact:
 * the shortest decimal that reads back as the stored number).
 */
import { shortestFloat32 } from '../../src/text/float32.ts';
import type { Ticks } from './scale.ts';

/** A value as the readout shows it: 'NaN', '∞', '−∞', or the shortest exact decimal. */
export function formatValue(v: number, float32 = false): string {
  if (v !== v) return 'NaN';
  if (v === Infinity) return '∞';
  if (v === -Infinity) return '−∞';
  if (!float32) return String(v); // JS prints the shortest decimal that round-trips a float64
  return shortestFloat32(v);
}

/** A tick label with just the decimals its spacing needs (spacing 0.2 → '0.4', spacing 20 → '40'). */
export function formatTick(v: number, ticks: Ticks): string {
  if (v === 0) return '0';
  const { exponent } = ticks;
  if (exponent >= 6 || exponent <= -5) {
    // Long runs of zeros read worse than an exponent: 2e+7, 5e-6. One mantissa digit suffices
    // unless the value itself needs more (e.g. 1.2e+7 when the spacing is 2e+6).
    const digits = Math.max(0, Math.floor(Math.log10(Math.abs(v))) - exponent);
    return v.toExponential(Math.min(digits, 20));
  }
  return v.toFixed(exponent < 0 ? -exponent : 0);
}

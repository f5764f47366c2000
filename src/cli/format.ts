/** Text output helpers: aligned tables and exact, readable numbers. */
import { shortestFloat32 } from '../text/float32.ts';

/** Shortest decimal that reads back as the same float32; non-finite values by name. */
export function f32Text(v: number): string {
  if (Number.isNaN(v)) return 'NaN';
  if (v === Infinity) return 'Infinity';
  if (v === -Infinity) return '-Infinity';
  return shortestFloat32(v);
}

/**
 * A float32 for JSON: a number when finite, else the strings "NaN", "Infinity", "-Infinity"
 * (JSON has no non-finite numbers, and turning them into null would hide the evidence).
 */
export function f32Json(v: number): number | string {
  return Number.isFinite(v) ? Number(f32Text(v)) : f32Text(v);
}

/** Fixed decimals for a table cell; non-finite values by name. */
export function fixed(v: number | null, digits = 3): string {
  if (v === null) return '–';
  if (!Number.isFinite(v)) return f32Text(v);
  return v.toFixed(digits);
}

/** Columns right-aligned when every cell is numeric-looking, else left-aligned. */
export function table(head: string[], rows: string[][]): string {
  const widths = head.map((h, i) => Math.max(h.length, ...rows.map((r) => r[i].length)));
  const numeric = head.map((_, i) => rows.length > 0 && rows.every((r) => /^[-+]?[\d.,]+%?$|^–$|^NaN$|^-?Infinity$/.test(r[i])));
  const line = (cells: string[]) =>
    cells.map((c, i) => (numeric[i] ? c.padStart(widths[i]) : c.padEnd(widths[i]))).join('  ').trimEnd();
  return [line(head), line(widths.map((w) => '─'.repeat(w))), ...rows.map(line)].join('\n');
}

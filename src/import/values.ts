/**
 * Reading single values: numbers (with the non-finite spellings of fields.ts), whole numbers,
 * flags and action names, from a JSON value or a CSV cell. Each reader throws a FieldProblem
 * saying what it got and what it expected.
 */
import { FieldProblem } from './errors.ts';

/** JSON cannot hold NaN or ±Infinity; loggers that keep them write these strings. */
const JSON_NON_FINITE: Record<string, number> = { NaN: NaN, Infinity: Infinity, '-Infinity': -Infinity };

/** CSV writers spell them many ways (C's printf "-nan", NumPy's "inf"); any case. */
const CSV_NON_FINITE: Record<string, number> = {
  nan: NaN, '+nan': NaN, '-nan': NaN,
  inf: Infinity, '+inf': Infinity, infinity: Infinity, '+infinity': Infinity,
  '-inf': -Infinity, '-infinity': -Infinity,
};

/** A decimal number as a CSV cell may hold it; Number() alone would take "" and "0x1f". */
const DECIMAL = /^[+-]?(\d+\.?\d*|\.\d+)([eE][+-]?\d+)?$/;
const WHOLE = /^[+-]?\d+$/;

export const NUMBER_EXPECTED = 'expected a number (or "NaN", "Infinity", "-Infinity")';

/** A value for a message: strings quoted, long ones cut, so one bad line stays one line. */
export function show(v: unknown): string {
  let s: string;
  if (typeof v === 'string') s = JSON.stringify(v);
  else if (v === undefined) s = 'undefined';
  else {
    try {
      s = JSON.stringify(v) ?? String(v);
    } catch {
      s = String(v);
    }
  }
  return s.length > 40 ? `${s.slice(0, 37)}…` : s;
}

export function jsonNumber(v: unknown, field: string): number {
  if (typeof v === 'number') return v;
  if (typeof v === 'string') {
    const special = JSON_NON_FINITE[v];
    if (special !== undefined) return special;
  }
  throw new FieldProblem(field, v === null ? `is null; ${NUMBER_EXPECTED}` : `${show(v)} is not a number; ${NUMBER_EXPECTED}`);
}

export function jsonWhole(v: unknown, field: string): number {
  if (v === undefined) throw new FieldProblem(field, 'is missing; expected a whole number ≥ 0');
  if (typeof v !== 'number' || !Number.isSafeInteger(v) || v < 0) throw new FieldProblem(field, `${show(v)} is not a whole number ≥ 0`);
  return v;
}

export function jsonFlag(v: unknown, field: string): boolean {
  if (v === true || v === false) return v;
  if (v === undefined) throw new FieldProblem(field, 'is missing; expected true or false');
  throw new FieldProblem(field, `${show(v)} is not true or false`);
}

export function csvNumber(cell: string, field: string): number {
  const t = cell.trim();
  if (t === '') throw new FieldProblem(field, `is empty; ${NUMBER_EXPECTED}`);
  if (DECIMAL.test(t)) return Number(t);
  const special = CSV_NON_FINITE[t.toLowerCase()];
  if (special !== undefined) return special;
  throw new FieldProblem(field, `${show(cell)} is not a number; ${NUMBER_EXPECTED}`);
}

export function csvWhole(cell: string, field: string): number {
  const t = cell.trim();
  if (t === '') throw new FieldProblem(field, 'is empty; expected a whole number ≥ 0');
  const v = WHOLE.test(t) ? Number(t) : NaN;
  if (!Number.isSafeInteger(v) || v < 0) throw new FieldProblem(field, `${show(cell)} is not a whole number ≥ 0`);
  return v;
}

export function csvFlag(cell: string, field: string): boolean {
  const t = cell.trim().toLowerCase();
  if (t === 'true' || t === '1') return true;
  if (t === 'false' || t === '0') return false;
  if (t === '') throw new FieldProblem(field, 'is empty; expected true, false, 1 or 0');
  throw new FieldProblem(field, `${show(cell)} is not true, false, 1 or 0`);
}

/**
 * An action: an index below A, or a name from --actions. `raw` is a number (JSON) or text (JSON
 * string or CSV cell); text that is a whole number is an index, since action names may not be.
 */
export function actionValue(raw: unknown, A: number, names: Map<string, number> | null): number {
  const range = `0..${A - 1}`;
  if (raw === undefined) throw new FieldProblem('action', `is missing; expected an action index ${range}${names ? ' or name' : ''}`);
  let index: number;
  if (typeof raw === 'number') index = raw;
  else if (typeof raw === 'string') {
    const t = raw.trim();
    if (t === '') throw new FieldProblem('action', `is empty; expected an action index ${range}${names ? ' or name' : ''}`);
    if (WHOLE.test(t)) index = Number(t);
    else {
      const named = names?.get(raw) ?? names?.get(t);
      if (named !== undefined) return named;
      throw new FieldProblem(
        'action',
        names
          ? `${show(raw)} is not an action name (${[...names.keys()].join(', ')}) nor an index ${range}`
          : `${show(raw)} is not an action index ${range} (give --actions to use names)`,
      );
    }
  } else throw new FieldProblem('action', `${show(raw)} is not an action index ${range}${names ? ' or name' : ''}`);
  if (!Number.isInteger(index) || index < 0 || index >= A) throw new FieldProblem('action', `${show(index)} is not one of ${range}`);
  return index;
}

/**
 * Argument handling shared by every command: strict flags (an unknown flag is an error, never
 * ignored), numbers checked where they are read, and one error type the entry point prints as one line.
 */
import { parseArgs, type ParseArgsConfig } from 'node:util';

/** Bad usage or bad input: printed as one line on stderr, exit code 2. */
export class UsageError extends Error {
  override readonly name = 'UsageError';
}

export type Options = NonNullable<ParseArgsConfig['options']>;

export interface Parsed {
  values: Record<string, string | boolean | undefined>;
  positionals: string[];
}

export function parse(command: string, argv: string[], options: Options, positionals: { min: number; max: number; names: string }): Parsed {
  let parsed;
  try {
    parsed = parseArgs({ args: argv, options, allowPositionals: true, strict: true });
  } catch (e) {
    // node's messages are long and mention internals; keep the part that names the flag.
    const msg = (e as Error).message.split('\n')[0].replace(/\. To specify a positional argument.*$/, '');
    throw new UsageError(`episcope ${command}: ${msg}`);
  }
  const n = parsed.positionals.length;
  if (n < positionals.min) throw new UsageError(`episcope ${command}: expected ${positionals.names}`);
  if (n > positionals.max) throw new UsageError(`episcope ${command}: unexpected argument "${parsed.positionals[positionals.max]}"`);
  return { values: parsed.values as Parsed['values'], positionals: parsed.positionals };
}

/** A whole number flag, within bounds. */
export function intFlag(command: string, values: Parsed['values'], name: string, min = 0, max = Number.MAX_SAFE_INTEGER): number | undefined {
  const raw = values[name];
  if (raw === undefined) return undefined;
  const s = String(raw).trim();
  const v = /^-?\d+$/.test(s) ? Number(s) : NaN;
  if (!Number.isSafeInteger(v) || v < min || v > max) {
    throw new UsageError(`episcope ${command}: --${name} "${raw}" is not a whole number${max === Number.MAX_SAFE_INTEGER ? ` ≥ ${min}` : ` in ${min}..${max}`}`);
  }
  return v;
}

export function numberFlag(command: string, values: Parsed['values'], name: string, min = -Infinity, max = Infinity): number | undefined {
  const raw = values[name];
  if (raw === undefined) return undefined;
  const s = String(raw).trim();
  const v = s === '' ? NaN : Number(s);
  if (!Number.isFinite(v) || v < min || v > max) throw new UsageError(`episcope ${command}: --${name} "${raw}" is not a number in [${min}, ${max}]`);
  return v;
}

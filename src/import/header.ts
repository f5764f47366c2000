/**
 * The header of an imported step file, from the command line's names and the sizes the input
 * shows. Names not given are s0, s1, … and a0, a1, …; γ not given is 0.99, and the caller says so.
 */
import type { RecorderHeader } from '../record/recorder.ts';
import { ImportError } from './errors.ts';

export const DEFAULT_GAMMA = 0.99;

export interface HeaderNames {
  stateDims?: readonly string[] | null;
  units?: readonly string[] | null;
  actions?: readonly string[] | null;
  gamma?: number | null;
  system?: string | null;
}

/** Names and numbers that are wrong whatever the input holds; checked before any reading. */
export function checkHeaderNames(n: HeaderNames): void {
  const unique = (flag: string, names: readonly string[] | null | undefined) => {
    if (!names) return;
    const seen = new Set<string>();
    names.forEach((name, i) => {
      if (name.trim() === '') throw new ImportError(`--${flag}: name ${i + 1} is empty`);
      if (seen.has(name)) throw new ImportError(`--${flag}: "${name}" is named twice`);
      seen.add(name);
    });
  };
  unique('state-dims', n.stateDims);
  unique('actions', n.actions);
  // A log's action cell "1" must mean one thing: index 1, never an action named "1".
  const numeric = n.actions?.find((a) => /^\s*[+-]?\d+\s*$/.test(a));
  if (numeric !== undefined) throw new ImportError(`--actions: "${numeric}" is a whole number; action names must not look like indices`);
  if (n.gamma !== undefined && n.gamma !== null && !(n.gamma >= 0 && n.gamma <= 1)) throw new ImportError(`--gamma ${n.gamma}: expected a discount in [0, 1]`);
  if (n.system !== undefined && n.system !== null && n.system.trim() === '') throw new ImportError('--system: the kind is empty');
}

/**
 * `sizes` say what the input holds, for a mismatch: "the log's state has 4 dimensions", "the
 * network takes 4 inputs".
 */
export function importHeader(D: number, A: number, names: HeaderNames, run: Record<string, unknown>, sizes: { state: string; actions: string }): RecorderHeader {
  const plural = (k: number, word: string) => `${k} ${word}${k === 1 ? '' : 's'}`;
  const stateNames = names.stateDims ?? Array.from({ length: D }, (_, i) => `s${i}`);
  if (stateNames.length !== D) throw new ImportError(`--state-dims names ${plural(stateNames.length, 'dimension')}; ${sizes.state}`);
  if (names.units && names.units.length !== D) throw new ImportError(`--units gives ${plural(names.units.length, 'unit')}; ${sizes.state}`);
  const actions = names.actions ?? Array.from({ length: A }, (_, i) => `a${i}`);
  if (actions.length !== A) throw new ImportError(`--actions names ${plural(actions.length, 'action')}; ${sizes.actions}`);
  return {
    stateDims: stateNames.map((name, i) => ({ name, unit: names.units?.[i] ?? '' })),
    actions: [...actions],
    gamma: names.gamma ?? DEFAULT_GAMMA,
    system: { kind: names.system ?? 'imported', map: {} },
    run,
    // When the run was recorded is not known from a log; the format allows empty.
    createdAt: '',
  };
}

/**
 * CSV rows → StepRows. The header row is read once into a layout (which column holds which
 * field, fields.ts); each record is then read through it. Pure.
 */
import { FieldProblem } from './errors.ts';
import type { LineShape, StepRow } from './fields.ts';
import { actionValue, csvFlag, csvNumber, csvWhole } from './values.ts';

export interface CsvLayout {
  /** Fields per record: the header row's count. */
  width: number;
  names: string[];
  D: number;
  A: number;
  /** Dimension names the columns give (state.x, state.v), or null for state.0, state.1, … */
  stateNames: string[] | null;
  state: number[];
  q: number[];
  finalState: number[] | null;
  finalQ: number[] | null;
  episode: number;
  step: number;
  action: number;
  reward: number;
  terminal: number;
  truncated: number;
  /** −1: the column is absent. */
  explored: number;
  epsilon: number;
  failed: number;
  mode: number;
  reason: number;
  /** Columns the import does not read, to be reported once. */
  ignored: string[];
}

const REQUIRED = ['episode', 'step', 'action', 'reward', 'terminal', 'truncated'] as const;
const OPTIONAL = ['explored', 'epsilon', 'failed', 'mode', 'reason'] as const;
const EXPECTED = 'expected columns episode, step, state.0 …, action, reward, terminal, truncated, q.0 …';

/** Read the header row. `stateDims` and `actions` are the names given on the command line, if any. */
export function csvLayout(header: string[], stateDims: readonly string[] | null, actions: readonly string[] | null): CsvLayout {
  const names = header.map((h) => h.trim());
  const at = new Map<string, number>();
  names.forEach((n, i) => {
    if (at.has(n)) throw new FieldProblem(null, `names column "${n}" twice (columns ${at.get(n)! + 1} and ${i + 1})`);
    at.set(n, i);
  });
  const used = new Set<number>();
  const take = (name: string): number => {
    const i = at.get(name);
    if (i === undefined) return -1;
    used.add(i);
    return i;
  };

  const scalars = {} as Record<(typeof REQUIRED)[number] | (typeof OPTIONAL)[number], number>;
  for (const f of REQUIRED) {
    scalars[f] = take(f);
    if (scalars[f] < 0) throw new FieldProblem(f, `has no column; ${EXPECTED}`);
  }
  for (const f of OPTIONAL) scalars[f] = take(f);

  const state = stateColumns(names, stateDims, take);
  const stateNames = stateDims ? [...stateDims] : state.names;
  const D = state.columns.length;
  const q = actionColumns('q', names, actions, take, true)!;
  const A = q.length;
  const finalState = dimColumns('final_state', names, stateNames, D, take);
  const finalQ = actionColumns('final_q', names, actions, take, false);
  if (finalQ && finalQ.length !== A) throw new FieldProblem('final_q', `has ${finalQ.length} columns; expected ${A} (one per action, as the q columns)`);

  // A stray state.* or q.* column means the sizes are not what the user thinks: say so now.
  for (const prefix of ['state.', 'q.', 'final_state.', 'final_q.']) {
    const stray = names.findIndex((n, i) => n.startsWith(prefix) && !used.has(i));
    if (stray >= 0) {
      const what = prefix === 'q.' || prefix === 'final_q.' ? `an action (${actions ? actions.join(', ') : `0..${A - 1}`})` : `a state dimension (${stateNames ? stateNames.join(', ') : `0..${D - 1}`})`;
      throw new FieldProblem(names[stray], `is a column, but not ${what}`);
    }
  }
  return {
    width: names.length,
    names,
    D,
    A,
    stateNames,
    state: state.columns,
    q,
    finalState,
    finalQ,
    ...scalars,
    ignored: names.filter((_, i) => !used.has(i)),
  };
}

function stateColumns(
  names: string[],
  stateDims: readonly string[] | null,
  take: (name: string) => number,
): { columns: number[]; names: string[] | null } {
  if (stateDims) {
    const columns = stateDims.map((name, i) => {
      for (const c of [`state.${name}`, name, `state.${i}`]) {
        const col = take(c);
        if (col >= 0) return col;
      }
      throw new FieldProblem(`state.${name}`, `has no column; expected state.${name}, ${name} or state.${i} for state dimension ${i} of --state-dims`);
    });
    return { columns, names: null };
  }
  const cols = names.map((n, i) => [n, i] as const).filter(([n]) => n.startsWith('state.'));
  if (cols.length === 0) throw new FieldProblem('state', `has no columns; expected state.0, state.1, … (or the names given by --state-dims)`);
  const numbered = cols.every(([n]) => /^\d+$/.test(n.slice(6)));
  if (!numbered) {
    // state.x, state.v, …: the columns name the dimensions, in their order.
    if (cols.some(([n]) => /^\d+$/.test(n.slice(6)))) throw new FieldProblem('state', 'columns mix numbers and names (state.0, state.v); expected one or the other');
    return { columns: cols.map(([n]) => take(n)), names: cols.map(([n]) => n.slice(6)) };
  }
  const columns: number[] = [];
  for (let i = 0; i < cols.length; i++) {
    const col = take(`state.${i}`);
    if (col < 0) throw new FieldProblem(`state.${i}`, `has no column, but there are ${cols.length} state columns; expected state.0 … state.${cols.length - 1}`);
    columns.push(col);
  }
  return { columns, names: null };
}

/** final_state.<name> or final_state.<i> for every dimension; null when there are none at all. */
function dimColumns(prefix: string, names: string[], stateNames: string[] | null, D: number, take: (name: string) => number): number[] | null {
  if (!names.some((n) => n.startsWith(prefix + '.'))) return null;
  return Array.from({ length: D }, (_, i) => {
    const tries = stateNames ? [`${prefix}.${stateNames[i]}`, `${prefix}.${i}`] : [`${prefix}.${i}`];
    for (const c of tries) {
      const col = take(c);
      if (col >= 0) return col;
    }
    throw new FieldProblem(tries[0], `has no column; with any ${prefix} column, expected one for every state dimension`);
  });
}

/** q.<action name> or q.<i> per action. */
function actionColumns(
  prefix: 'q' | 'final_q',
  names: string[],
  actions: readonly string[] | null,
  take: (name: string) => number,
  required: boolean,
): number[] | null {
  if (actions) {
    if (!required && !names.some((n) => n.startsWith(prefix + '.'))) return null;
    return actions.map((name, i) => {
      for (const c of [`${prefix}.${name}`, `${prefix}.${i}`]) {
        const col = take(c);
        if (col >= 0) return col;
      }
      throw new FieldProblem(`${prefix}.${name}`, `has no column; expected ${prefix}.${name} or ${prefix}.${i} for action ${i} of --actions`);
    });
  }
  const cols = names.filter((n) => n.startsWith(prefix + '.'));
  if (cols.length === 0) {
    if (!required) return null;
    throw new FieldProblem(prefix, `has no columns; expected ${prefix}.0, ${prefix}.1, … (or ${prefix}.<action name> with --actions)`);
  }
  const named = cols.find((n) => !/^\d+$/.test(n.slice(prefix.length + 1)));
  if (named) throw new FieldProblem(named, 'names an action, but no --actions was given; pass --actions in index order so each name has its index');
  return cols.map((_, i) => {
    const col = take(`${prefix}.${i}`);
    if (col < 0) throw new FieldProblem(`${prefix}.${i}`, `has no column, but there are ${cols.length} ${prefix} columns; expected ${prefix}.0 … ${prefix}.${cols.length - 1}`);
    return col;
  });
}

/** Per-import scratch arrays, so a row costs no allocation. */
export interface CsvScratch {
  state: Float64Array;
  q: Float64Array;
  finalState: Float64Array;
  finalQ: Float64Array;
}

export function csvScratch(layout: CsvLayout): CsvScratch {
  return { state: new Float64Array(layout.D), q: new Float64Array(layout.A), finalState: new Float64Array(layout.D), finalQ: new Float64Array(layout.A) };
}

/** Read one record into `row`. Throws FieldProblem naming the column. */
export function parseCsvStep(fields: string[], L: CsvLayout, shape: LineShape, row: StepRow, scratch: CsvScratch): StepRow {
  if (fields.length !== L.width) throw new FieldProblem(null, `has ${fields.length} field${fields.length === 1 ? '' : 's'}; the header row has ${L.width}`);
  const name = L.names;
  row.episode = csvWhole(fields[L.episode], 'episode');
  row.step = csvWhole(fields[L.step], 'step');
  for (let i = 0; i < L.D; i++) scratch.state[i] = csvNumber(fields[L.state[i]], name[L.state[i]]);
  row.state = scratch.state;
  for (let i = 0; i < L.A; i++) scratch.q[i] = csvNumber(fields[L.q[i]], name[L.q[i]]);
  row.q = scratch.q;
  row.action = actionValue(fields[L.action], L.A, shape.actionIndex);
  row.reward = csvNumber(fields[L.reward], 'reward');
  row.terminal = csvFlag(fields[L.terminal], 'terminal');
  row.truncated = csvFlag(fields[L.truncated], 'truncated');
  row.explored = optional(fields, L.explored) ? csvFlag(fields[L.explored], 'explored') : false;
  row.epsilon = optional(fields, L.epsilon) ? csvNumber(fields[L.epsilon], 'epsilon') : undefined;
  row.failed = optional(fields, L.failed) ? csvFlag(fields[L.failed], 'failed') : undefined;
  row.finalState = L.finalState && allOrNone(fields, L.finalState, name, 'final_state') ? readInto(fields, L.finalState, name, scratch.finalState) : null;
  row.finalQ = L.finalQ && allOrNone(fields, L.finalQ, name, 'final_q') ? readInto(fields, L.finalQ, name, scratch.finalQ) : null;
  // Text is taken as written: RFC 4180 makes spaces part of a field.
  row.mode = optional(fields, L.mode) ? fields[L.mode] : undefined;
  row.reason = optional(fields, L.reason) ? fields[L.reason] : undefined;
  return row;
}

/** An optional column counts as absent when it is missing or its cell is empty. */
function optional(fields: string[], col: number): boolean {
  return col >= 0 && fields[col].trim() !== '';
}

/** True when every cell of a vector is filled, false when all are empty; a mix is an error. */
function allOrNone(fields: string[], cols: number[], name: string[], what: string): boolean {
  let filled = 0;
  for (const c of cols) if (fields[c].trim() !== '') filled++;
  if (filled === 0) return false;
  if (filled < cols.length) {
    const empty = cols.find((c) => fields[c].trim() === '')!;
    throw new FieldProblem(name[empty], `is empty while other ${what} cells are filled; expected all ${cols.length} values or none`);
  }
  return true;
}

function readInto(fields: string[], cols: number[], name: string[], out: Float64Array): Float64Array {
  for (let i = 0; i < cols.length; i++) out[i] = csvNumber(fields[cols[i]], name[cols[i]]);
  return out;
}

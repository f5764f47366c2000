/**
 * One JSON Lines line → one StepRow (the fields are listed in fields.ts). Pure. The parsed arrays
 * are used as they are, with the non-finite strings replaced by numbers in place, so a line costs
 * JSON.parse and nothing more.
 */
import { FieldProblem } from './errors.ts';
import { JSON_FIELDS, type LineShape, type StepRow } from './fields.ts';
import { actionValue, jsonFlag, jsonNumber, jsonWhole, show } from './values.ts';

type Obj = Record<string, unknown>;

const KNOWN = new Set<string>(JSON_FIELDS);

/**
 * Parse `text` into `row` (overwriting every field). Throws FieldProblem naming the field. Keys
 * that are not fields go into `unknown`, when given, so they can be reported once.
 */
export function parseJsonStep(text: string, shape: LineShape, row: StepRow, unknown?: Set<string>): StepRow {
  let o: unknown;
  try {
    o = JSON.parse(text);
  } catch (e) {
    throw new FieldProblem(null, `is not JSON (${(e as Error).message}); expected one JSON object per line`);
  }
  if (typeof o !== 'object' || o === null || Array.isArray(o)) {
    throw new FieldProblem(null, `is ${Array.isArray(o) ? 'an array' : show(o)}; expected a JSON object with episode, step, state, action, reward, terminal, truncated, q`);
  }
  const line = o as Obj;
  if (unknown) for (const k in line) if (!KNOWN.has(k)) unknown.add(k);
  // episode and step first: the importer learns where an episode's steps start from them even when
  // a later field of the line is bad.
  row.episode = jsonWhole(line.episode, 'episode');
  row.step = jsonWhole(line.step, 'step');
  row.state = vector(line.state, 'state', shape.D, stateExpected(shape));
  row.q = vector(line.q, 'q', shape.A, 'one per action');
  const A = shape.A ?? row.q.length;
  row.action = actionValue(line.action, A, shape.actionIndex);
  if (line.reward === undefined) throw new FieldProblem('reward', 'is missing; expected a number');
  row.reward = jsonNumber(line.reward, 'reward');
  row.terminal = jsonFlag(line.terminal, 'terminal');
  row.truncated = jsonFlag(line.truncated, 'truncated');
  row.explored = line.explored === undefined || line.explored === null ? false : jsonFlag(line.explored, 'explored');
  row.epsilon = line.epsilon === undefined || line.epsilon === null ? undefined : jsonNumber(line.epsilon, 'epsilon');
  row.failed = line.failed === undefined || line.failed === null ? undefined : jsonFlag(line.failed, 'failed');
  row.finalState = line.final_state === undefined || line.final_state === null ? null : vector(line.final_state, 'final_state', row.state.length, stateExpected(shape));
  row.finalQ = line.final_q === undefined || line.final_q === null ? null : vector(line.final_q, 'final_q', A, 'one per action');
  row.mode = optionalText(line.mode, 'mode');
  row.reason = optionalText(line.reason, 'reason');
  return row;
}

/** "the state dimensions: x, v" when named, else "the state dimensions". */
export function stateExpected(shape: LineShape): string {
  return shape.stateNames ? `the state dimensions: ${shape.stateNames.join(', ')}` : 'the state dimensions';
}

/**
 * A JSON array of numbers, `length` long when that is known (else ≥ 1). Non-finite strings become
 * numbers in the array itself: it belongs to this line's parse, nothing else holds it.
 */
function vector(v: unknown, field: string, length: number | null, why: string): number[] {
  if (v === undefined) throw new FieldProblem(field, `is missing; expected an array of ${length ?? 'one or more'} numbers`);
  if (!Array.isArray(v)) throw new FieldProblem(field, `${show(v)} is not an array; expected ${length ?? 'one or more'} numbers`);
  if (length !== null ? v.length !== length : v.length === 0) {
    throw new FieldProblem(field, `has ${v.length} value${v.length === 1 ? '' : 's'}; expected ${length ?? 'one or more'}${length !== null ? ` (${why})` : ''}`);
  }
  for (let i = 0; i < v.length; i++) if (typeof v[i] !== 'number') v[i] = jsonNumber(v[i], `${field}[${i}]`);
  return v as number[];
}

function optionalText(v: unknown, field: string): string | undefined {
  if (v === undefined || v === null) return undefined;
  if (typeof v !== 'string') throw new FieldProblem(field, `${show(v)} is not a string`);
  return v;
}

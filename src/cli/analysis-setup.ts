/**
 * What `td`, `suspects` and `health` share: resolving --target/--online snapshot specs against the
 * recording, checking they fit it, and turning them into the QFunction the analysis takes.
 */
import type { StepFile } from '../../formats/reader.ts';
import type { QFunction } from '../analysis/series.ts';
import { TD_RULES, type TdOptions, type TdRule } from '../analysis/td.ts';
import { checkSnapshotFits, createQEvaluator, loadSnapshotSpec, type LoadedSnapshot, type QEvaluator } from '../net/index.ts';
import { UsageError, intFlag, numberFlag, type Parsed } from './args.ts';

export interface LoadedNet {
  snapshot: LoadedSnapshot;
  evaluator: QEvaluator;
  q: QFunction;
}

export async function loadNet(command: string, spec: string, recording: StepFile): Promise<LoadedNet> {
  let snapshot: LoadedSnapshot;
  try {
    snapshot = await loadSnapshotSpec(spec, recording);
    checkSnapshotFits(snapshot.layers, recording.header, snapshot.source);
  } catch (e) {
    throw new UsageError(`episcope ${command}: ${(e as Error).message}`);
  }
  const evaluator = await createQEvaluator(snapshot.layers);
  return { snapshot, evaluator, q: (states, n) => evaluator.evaluate(states, n) };
}

export const tdFlags = {
  rule: { type: 'string' },
  n: { type: 'string' },
  gamma: { type: 'string' },
  truncation: { type: 'string' },
} as const;

export function tdOptionsFrom(command: string, values: Parsed['values']): Partial<TdOptions> {
  const rule = values.rule === undefined ? 'dqn' : String(values.rule);
  if (!TD_RULES.includes(rule as TdRule)) throw new UsageError(`episcope ${command}: --rule "${rule}" is not one of ${TD_RULES.join(', ')}`);
  const truncation = values.truncation === undefined ? 'bootstrap' : String(values.truncation);
  if (truncation !== 'bootstrap' && truncation !== 'terminal') {
    throw new UsageError(`episcope ${command}: --truncation "${truncation}" is not bootstrap or terminal`);
  }
  const n = intFlag(command, values, 'n', 1, 10_000);
  if (n !== undefined && rule !== 'nstep') throw new UsageError(`episcope ${command}: --n only applies to --rule nstep`);
  const gamma = numberFlag(command, values, 'gamma', 0, 1);
  return { rule: rule as TdRule, n: n ?? 3, truncation, ...(gamma === undefined ? {} : { gamma }) };
}

export function describeNet(role: string, net: LoadedNet): string {
  return `${role} ${net.snapshot.source}; inference on ${net.evaluator.backend}${net.evaluator.note ? ` (${net.evaluator.note})` : ''}`;
}

export const SIGN_CONVENTION = 'δ = y − Q(s, a): positive means the estimate was too low, negative too high';

/**
 * `episcope dump FILE --episode E [--from A --to B] [--json]`: an episode's steps, one JSON object
 * per step (a JSON array, written as it goes) with the fields named as in formats/SPEC.md, or a table.
 */
import { FLAG_EXPLORED, FLAG_TERMINAL, FLAG_TRUNCATED } from '../../formats/types.ts';
import type { EpisodeSteps } from '../../formats/reader.ts';
import { StepFileError } from '../../formats/errors.ts';
import { UsageError, intFlag, parse } from './args.ts';
import { f32Json, f32Text, table } from './format.ts';
import type { CommandIO } from './io.ts';
import { openForCommand } from './open.ts';

export const dumpUsage = 'episcope dump FILE --episode E [--from A] [--to B] [--json]';

export interface StepRecordJson {
  episode: number;
  step: number;
  state: (number | string)[];
  action: number;
  reward: number | string;
  terminal: boolean;
  truncated: boolean;
  explored: boolean;
  q: (number | string)[];
  epsilon?: number | string;
  extras?: Record<string, number | string>;
  onlineId: string;
  targetId: string;
}

/** Rows [from, to] of an episode (step indices, inclusive) as JSON-ready objects. */
export function stepsAsJson(e: EpisodeSteps, D: number, A: number, from: number, to: number): StepRecordJson[] {
  const out: StepRecordJson[] = [];
  let run = 0;
  for (let i = 0; i < e.n; i++) {
    while (run + 1 < e.weights.length && e.weights[run + 1][0] <= i) run++;
    const step = e.step[i];
    if (step < from || step > to) continue;
    const flags = e.flags[i];
    const rec: StepRecordJson = {
      episode: e.episode,
      step,
      state: Array.from(e.state.subarray(i * D, i * D + D), f32Json),
      action: e.action[i],
      reward: f32Json(e.reward[i]),
      terminal: (flags & FLAG_TERMINAL) !== 0,
      truncated: (flags & FLAG_TRUNCATED) !== 0,
      explored: (flags & FLAG_EXPLORED) !== 0,
      q: Array.from(e.q.subarray(i * A, i * A + A), f32Json),
      onlineId: e.weights[run]?.[1] ?? '',
      targetId: e.weights[run]?.[2] ?? '',
    };
    if (e.epsilon) rec.epsilon = f32Json(e.epsilon[i]);
    const names = Object.keys(e.extras);
    if (names.length) rec.extras = Object.fromEntries(names.map((k) => [k, f32Json(e.extras[k][i])]));
    out.push(rec);
  }
  return out;
}

export function dumpCommand(argv: string[], io: CommandIO): void {
  const { values, positionals } = parse(
    'dump',
    argv,
    { episode: { type: 'string' }, from: { type: 'string' }, to: { type: 'string' }, json: { type: 'boolean' } },
    { min: 1, max: 1, names: 'a step file: ' + dumpUsage },
  );
  const episode = intFlag('dump', values, 'episode');
  if (episode === undefined) throw new UsageError(`episcope dump: --episode E is required (${dumpUsage})`);
  const from = intFlag('dump', values, 'from') ?? 0;
  const to = intFlag('dump', values, 'to') ?? Number.MAX_SAFE_INTEGER;
  if (to < from) throw new UsageError(`episcope dump: --to ${to} is before --from ${from}`);
  const file = openForCommand('dump', positionals[0]);
  try {
    let steps: EpisodeSteps;
    try {
      steps = file.readEpisode(episode);
    } catch (e) {
      if (e instanceof StepFileError) throw new UsageError(`episcope dump: ${e.message}`);
      throw e;
    }
    const last = steps.n ? steps.step[steps.n - 1] : -1;
    if (values.from !== undefined && from > last) {
      throw new UsageError(`episcope dump: --from ${from} is past the last step of episode ${episode} (${last < 0 ? 'it has no steps' : `steps 0..${last}`})`);
    }
    const D = file.header.stateDims.length;
    const A = file.header.actions.length;
    const rows = stepsAsJson(steps, D, A, from, to);
    if (values.json) {
      io.out('[');
      rows.forEach((r, i) => io.out((i ? ',\n' : '\n') + JSON.stringify(r)));
      io.out(rows.length ? '\n]\n' : ']\n');
      return;
    }
    const h = file.header;
    const head = ['step', ...h.stateDims.map((d) => d.name), 'action', 'reward', ...h.actions.map((a) => `Q ${a}`), 'flags'];
    io.out(
      table(
        head,
        rows.map((r) => [
          String(r.step),
          ...r.state.map((v) => f32Text(Number(v))),
          `${r.action}${r.explored ? '*' : ''}`,
          f32Text(Number(r.reward)),
          ...r.q.map((v) => f32Text(Number(v))),
          [r.terminal ? 'terminal' : '', r.truncated ? 'truncated' : ''].filter(Boolean).join(' ') || '–',
        ]),
      ) + `\n(* explored action)\n`,
    );
  } finally {
    file.close();
  }
}

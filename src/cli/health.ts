/** `episcope health FILE [--json]`: average max Q over held-out states for every snapshot, in training order. */
import { largestReward } from '../analysis/analyse.ts';
import { healthSeries, heldOutStates } from '../analysis/health.ts';
import { valueBound } from '../analysis/suspects.ts';
import { createQEvaluator } from '../net/index.ts';
import { intFlag, parse } from './args.ts';
import { fixed, table } from './format.ts';
import type { CommandIO } from './io.ts';
import { openForCommand, recoveryLines } from './open.ts';
import { jsonReplacer } from './summary.ts';

import { healthUsage } from './usage.ts';
export { healthUsage };

export async function healthCommand(argv: string[], io: CommandIO): Promise<void> {
  const { values, positionals } = parse('health', argv, { json: { type: 'boolean' }, states: { type: 'string' } }, { min: 1, max: 1, names: 'a step file: ' + healthUsage });
  const count = intFlag('health', values, 'states', 1, 1_000_000) ?? 500;
  const file = openForCommand('health', positionals[0]);
  try {
    const held = heldOutStates(file, count);
    const rMax = largestReward(file);
    const bound = valueBound(rMax, file.header.gamma);
    const evaluators = [];
    const points = [];
    let backend = '';
    let note: string | null = null;
    for (const ref of file.snapshots) {
      const snap = file.readSnapshot(ref);
      const ev = await createQEvaluator(snap.layers);
      backend = ev.backend;
      note = ev.note;
      evaluators.push(ev);
      points.push({ role: ref.role, id: ref.id, trainingStep: ref.trainingStep, q: (s: Float32Array, n: number) => ev.evaluate(s, n) });
    }
    const series = healthSeries(points, held, file.header.actions.length, rMax, bound);
    for (const ev of evaluators) ev.dispose();
    if (values.json) {
      io.out(JSON.stringify({ file: file.name, heldOut: { count: held.count, drawnFrom: held.drawnFrom, places: held.places }, rMax, bound, backend, note, points: series }, jsonReplacer, 1) + '\n');
      return;
    }
    const lines = [
      `file      ${file.name}`,
      `held out  ${held.count} states drawn reproducibly from the recording's ${held.drawnFrom === 'explored' ? 'explored' : ''} training steps (seed 1)`,
      `measure   average over those states of max_a Q(s, a), per snapshot (inference on ${backend || '–'}${note ? `, ${note}` : ''})`,
      `bound     r_max/(1−γ) = ${fixed(bound, 3)} with r_max = ${fixed(rMax, 4)}`,
      ...recoveryLines(file).map((l) => `!         ${l}`),
      '',
      table(
        ['training step', 'role', 'id', 'average max Q', 'flag'],
        series.map((p) => [String(p.trainingStep), p.role, p.id.slice(0, 8), fixed(p.averageMaxQ, 4), p.flag ?? '–']),
      ),
    ];
    if (series.length === 0) lines.push('(the file holds no snapshots)');
    io.out(lines.join('\n') + '\n');
  } finally {
    file.close();
  }
}

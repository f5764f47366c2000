/** `episcope suspects FILE [--target SNAP] [--top K] [--json]`: the ranked Suspects and a verdict per episode. */
import { analyseFile } from '../analysis/analyse.ts';
import { intFlag, parse } from './args.ts';
import { SIGN_CONVENTION, describeNet, loadNet, tdFlags, tdOptionsFrom } from './analysis-setup.ts';
import { fixed, table } from './format.ts';
import type { CommandIO } from './io.ts';
import { openForCommand, recoveryLines } from './open.ts';
import { jsonReplacer } from './summary.ts';

import { suspectsUsage } from './usage.ts';
export { suspectsUsage };

export async function suspectsCommand(argv: string[], io: CommandIO): Promise<void> {
  const { values, positionals } = parse(
    'suspects',
    argv,
    { target: { type: 'string' }, top: { type: 'string' }, json: { type: 'boolean' }, ...tdFlags },
    { min: 1, max: 1, names: 'a step file: ' + suspectsUsage },
  );
  const top = intFlag('suspects', values, 'top', 1) ?? 20;
  const td = tdOptionsFrom('suspects', values);
  const file = openForCommand('suspects', positionals[0]);
  try {
    const target = values.target === undefined ? null : await loadNet('suspects', String(values.target), file);
    const analysis = analyseFile(file, { target: target?.q ?? null, td });
    target?.evaluator.dispose();
    if (values.json) {
      const doc = {
        file: file.name,
        signConvention: SIGN_CONVENTION,
        target: target ? { source: target.snapshot.source, id: target.snapshot.id, backend: target.evaluator.backend, note: target.evaluator.note } : null,
        ...analysis,
        suspects: analysis.suspects.slice(0, top),
        totalSuspects: analysis.suspects.length,
        recovery: file.recovery,
      };
      io.out(JSON.stringify(doc, jsonReplacer, 1) + '\n');
      return;
    }
    const c = analysis.cadence;
    const lines = [
      `file      ${file.name}`,
      target ? `target    ${describeNet('', target).trim()}; ${td.rule} rule; ${SIGN_CONVENTION}` : 'target    none given: TD-error rules are off (give --target SNAP to judge TD errors)',
      `scale     r_max = ${fixed(analysis.rMax, 4)} (largest |reward|), γ = ${analysis.gamma}, value bound r_max/(1−γ) = ${fixed(analysis.bound, 3)}`,
      `syncs     ${c.changes.length} target changes, every ${c.median ?? '–'} training steps (min ${c.min ?? '–'}, max ${c.max ?? '–'})${c.irregular ? ' — irregular' : ''}`,
      ...recoveryLines(file).map((l) => `!         ${l}`),
      '',
      `Suspects (${Math.min(top, analysis.suspects.length)} of ${analysis.suspects.length}, most severe first)`,
    ];
    if (analysis.suspects.length === 0) lines.push('  none');
    else {
      lines.push(
        table(
          ['rank', 'severity', 'rule', 'episode', 'steps', 'reason'],
          analysis.suspects.slice(0, top).map((s, i) => [String(i + 1), `${s.severity} ${s.level}`, s.rule, String(s.episode), s.from === s.to ? String(s.from) : `${s.from}–${s.to}`, s.reason]),
        ),
      );
    }
    lines.push('', 'Episodes');
    lines.push(
      table(
        ['episode', 'mode', 'steps', 'return', 'verdict', 'reason', 'suspects', 'worst suspect'],
        analysis.episodes.map((e) => [
          String(e.episode),
          e.mode || '–',
          String(e.steps),
          fixed(e.return, 3),
          e.verdict,
          e.reason || '–',
          String(e.suspects),
          e.worst ? `${e.worst.rule} at step ${e.worst.step} (${e.worst.severity})` : '–',
        ]),
      ),
    );
    io.out(lines.join('\n') + '\n');
  } finally {
    file.close();
  }
}

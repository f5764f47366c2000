/**
 * `episcope import LOG.jsonl|LOG.csv -o OUT.steps …`: a log written by some other training loop,
 * one step per JSON Lines line or CSV row, into a step file. The fields are listed in
 * src/import/fields.ts and in the help text; the work is src/import/importer.ts.
 */
import { importLog, type ImportResult } from '../import/importer.ts';
import { ImportError } from '../import/errors.ts';
import { DEFAULT_GAMMA } from '../import/header.ts';
import { importUsage } from '../import/usage.ts';
import { UsageError, numberFlag, parse, type Parsed } from './args.ts';
import type { CommandIO } from './io.ts';

export { importUsage };

export async function importCommand(argv: string[], io: CommandIO): Promise<void> {
  const { values, positionals } = parse(
    'import',
    argv,
    {
      out: { type: 'string', short: 'o' },
      'state-dims': { type: 'string' },
      units: { type: 'string' },
      actions: { type: 'string' },
      gamma: { type: 'string' },
      system: { type: 'string' },
      'skip-bad': { type: 'boolean' },
      compress: { type: 'boolean' },
      force: { type: 'boolean' },
    },
    { min: 1, max: 1, names: 'a log to import: ' + importUsage },
  );
  if (values.out === undefined) throw new UsageError(`episcope import: -o OUT.steps is required (${importUsage})`);
  const gamma = numberFlag('import', values, 'gamma', 0, 1);
  let result: ImportResult;
  try {
    result = await importLog({
      input: positionals[0],
      out: String(values.out),
      stateDims: listFlag(values, 'state-dims'),
      units: listFlag(values, 'units'),
      actions: listFlag(values, 'actions'),
      gamma: gamma ?? null,
      system: values.system === undefined ? null : String(values.system).trim(),
      skipBad: values['skip-bad'] === true,
      compress: values.compress === true,
      force: values.force === true,
    });
  } catch (e) {
    if (e instanceof ImportError) throw new UsageError(`episcope import: ${e.message}`);
    throw e;
  }
  for (const note of importNotes(result)) io.err(`episcope import: ${note}\n`);
  if (result.skippedLines > 0) {
    io.err(`episcope import: skipped ${result.skippedLines.toLocaleString('en')} of ${count(result.lines, 'line')}:\n`);
    for (const s of result.skipped) io.err(`  ${s.message}\n`);
  }
  io.out(
    `wrote ${result.out} (${result.bytes.toLocaleString('en')} bytes): ${count(result.steps, 'step')} in ${count(result.episodes, 'episode')}, ` +
      `D = ${result.D}, A = ${result.A}, from ${count(result.lines, 'line')} of ${result.input}` +
      (result.skippedLines ? `, ${result.skippedLines.toLocaleString('en')} skipped` : '') +
      '\n',
  );
}

/** What the user should know about how the log was read, one line each. */
function importNotes(r: ImportResult): string[] {
  const notes: string[] = [];
  if (r.gammaDefaulted) notes.push(`no --gamma given; the header says γ = ${DEFAULT_GAMMA} (td and suspects use it unless they get --gamma)`);
  if (r.ignored.length) notes.push(`ignored ${r.format === 'csv' ? 'columns' : 'fields'} ${r.ignored.join(', ')} (not fields of an imported step)`);
  if (r.logEpisodes) {
    const shown = r.logEpisodes.length > 6 ? `${r.logEpisodes.slice(0, 5).join(', ')}, … ${r.logEpisodes[r.logEpisodes.length - 1]}` : r.logEpisodes.join(', ');
    notes.push(`the log numbers its episodes ${shown}; the step file numbers them 0..${r.logEpisodes.length - 1} (the header's run.logEpisodes keeps the log's numbers)`);
  }
  if (r.firstStep !== 0) notes.push(`the log counts steps from ${r.firstStep}; the step file counts them from 0`);
  return notes;
}

/**
 * A comma-separated list flag, items trimmed. Empty items are kept: '' is a unit ("no unit"), and
 * an empty name is refused by the importer with its position.
 */
export function listFlag(values: Parsed['values'], name: string): string[] | null {
  const raw = values[name];
  if (raw === undefined) return null;
  return String(raw).split(',').map((s) => s.trim());
}

function count(n: number, word: string): string {
  return `${n.toLocaleString('en')} ${word}${n === 1 ? '' : 's'}`;
}

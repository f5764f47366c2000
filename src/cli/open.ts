import { StepFileError } from '../../formats/errors.ts';
import { openStepFilePath } from '../../formats/node.ts';
import type { Dropped, StepFile } from '../../formats/reader.ts';
import { UsageError } from './args.ts';

/** Open a step file for a command; codec errors become one-line usage errors. */
export function openForCommand(command: string, path: string): StepFile {
  try {
    return openStepFilePath(path);
  } catch (e) {
    if (e instanceof StepFileError) throw new UsageError(`episcope ${command}: ${e.message}`);
    throw e;
  }
}

/** How a file was opened, in one or more plain lines. */
export function recoveryLines(file: StepFile): string[] {
  const r = file.recovery;
  if (r.indexed && r.dropped.length === 0) return [];
  const lines: string[] = [];
  if (!r.indexed) {
    lines.push(
      r.indexProblem
        ? `not closed properly: ${r.indexProblem}; read by a forward scan`
        : 'not closed properly (no index: the recorder stopped before close); read by a forward scan',
    );
  }
  lines.push(`recovered ${r.records} whole records, ${file.totalSteps} steps in ${file.episodes.length} episodes`);
  for (const d of r.dropped) lines.push(`dropped: ${describeDropped(d)}`);
  return lines;
}

export function describeDropped(d: Dropped): string {
  return `${d.problem} at byte ${d.offset}: ${d.detail} (${d.bytes} bytes not read)`;
}

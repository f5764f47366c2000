/**
 * Importing a JSON Lines or CSV log (fields.ts) into a step file, streamed in two passes.
 *
 * Why two: the header is a step file's first record and the file is append-only (SPEC.md §1), yet
 * the header holds what only the whole log tells — D and A when no flag gives them, how many lines
 * were read and skipped. So the first pass parses and checks every line and writes nothing; a bad
 * line stops the import before a byte is written. The second pass parses again and records, into a
 * partial file that is renamed onto OUT only when closed (output.ts). Each pass holds one chunk of
 * the log at a time, and the recorder writes each step block as it fills, so memory stays bounded
 * whatever the log's length.
 */
import { realpathSync, statSync } from 'node:fs';
import { basename, extname } from 'node:path';
import { ImportError } from './errors.ts';
import type { LineShape, StepRow } from './fields.ts';
import { checkHeaderNames, DEFAULT_GAMMA, importHeader } from './header.ts';
import { checkOutput, writeStepFile } from './output.ts';
import { scanLog, type LogFormat, type ScanResult, type ScanSettings, type SkippedLines } from './scan.ts';
import type { StepSink } from './sequence.ts';

export type { LogFormat, SkippedLines };

export interface ImportOptions {
  input: string;
  out: string;
  /** Default: from the input's name (.jsonl, .ndjson, .csv). */
  format?: LogFormat;
  stateDims?: readonly string[] | null;
  units?: readonly string[] | null;
  actions?: readonly string[] | null;
  gamma?: number | null;
  system?: string | null;
  /** Skip bad lines and report them, rather than stop at the first. */
  skipBad?: boolean;
  compress?: boolean;
  /** Replace OUT if it exists. */
  force?: boolean;
  /** Steps per step block (the recorder's default when absent). */
  blockSize?: number;
}

export interface ImportResult {
  input: string;
  out: string;
  format: LogFormat;
  lines: number;
  steps: number;
  episodes: number;
  skippedLines: number;
  skipped: SkippedLines[];
  D: number;
  A: number;
  bytes: number;
  /** No γ was given: the header says DEFAULT_GAMMA. */
  gammaDefaulted: boolean;
  ignored: string[];
  /** The log's episode numbers, when the step file's 0, 1, 2, … differ from them. */
  logEpisodes: number[] | null;
  /** 1 when the log counts steps from 1. */
  firstStep: number;
}

const EXTENSIONS: Record<string, LogFormat> = { '.jsonl': 'jsonl', '.ndjson': 'jsonl', '.jsonlines': 'jsonl', '.csv': 'csv' };

export function logFormat(path: string): LogFormat {
  const format = EXTENSIONS[extname(path).toLowerCase()];
  if (!format) throw new ImportError(`${path}: cannot tell the log's format from its name; expected a name ending in .jsonl (JSON Lines) or .csv`, path);
  return format;
}

export async function importLog(o: ImportOptions): Promise<ImportResult> {
  const format = o.format ?? logFormat(o.input);
  checkInput(o.input, o.out);
  checkOutput(o.out, o.force ?? false);
  checkHeaderNames(o);
  const shape = (): LineShape => ({
    D: o.stateDims ? o.stateDims.length : null,
    A: o.actions ? o.actions.length : null,
    actionIndex: o.actions ? new Map(o.actions.map((a, i) => [a, i])) : null,
    stateNames: o.stateDims ?? null,
  });
  const settings: ScanSettings = { path: o.input, label: o.input, format, shape: shape(), skipBad: o.skipBad ?? false, firstStep: null };
  const before = fileStamp(o.input);

  const counted = await scanLog(settings, { step: () => {}, endEpisode: () => {} });
  if (counted.steps === 0) {
    const why = counted.lines === 0 ? 'holds no steps' : `none of its ${counted.lines} line${counted.lines === 1 ? '' : 's'} could be imported (${counted.skipped[0]?.message ?? 'all were skipped'})`;
    throw new ImportError(`${o.input}: ${why}; nothing was written`, o.input);
  }
  const D = settings.shape.D!;
  const A = settings.shape.A!;
  const renumbered = counted.logEpisodes.some((e, i) => e !== i);
  const run: Record<string, unknown> = { importedFrom: basename(o.input), format, lines: counted.lines, skipped: counted.skippedLines };
  if (renumbered) run.logEpisodes = counted.logEpisodes;
  if (counted.firstStep !== 0) run.logFirstStep = counted.firstStep;
  const header = importHeader(
    D,
    A,
    { stateDims: o.stateDims ?? counted.stateNames, units: o.units, actions: o.actions, gamma: o.gamma, system: o.system },
    run,
    { state: `the log's state has ${D} dimension${D === 1 ? '' : 's'}`, actions: `the log's q has ${A} value${A === 1 ? '' : 's'} (one per action)` },
  );

  const { result: written, bytes } = await writeStepFile(o.out, o.force ?? false, header, { compress: o.compress ?? false, blockSize: o.blockSize }, async (recorder) => {
    const sink: StepSink = {
      // A StepRow is a StepInput: the recorder copies what it needs into its block.
      step: (row: StepRow) => recorder.step(row),
      endEpisode: (end) => void recorder.endEpisode(end),
    };
    const again = await scanLog({ ...settings, shape: { ...shape(), D, A }, firstStep: counted.firstStep }, sink);
    sameLog(o.input, counted, again, before);
    return again;
  });
  return {
    input: o.input,
    out: o.out,
    format,
    lines: written.lines,
    steps: written.steps,
    episodes: written.episodes,
    skippedLines: written.skippedLines,
    skipped: counted.skipped,
    D,
    A,
    bytes,
    gammaDefaulted: o.gamma === undefined || o.gamma === null,
    ignored: counted.ignored,
    logEpisodes: renumbered ? counted.logEpisodes : null,
    firstStep: counted.firstStep,
  };
}

export { DEFAULT_GAMMA };

function checkInput(input: string, out: string): void {
  let stat;
  try {
    stat = statSync(input);
  } catch (e) {
    const code = (e as NodeJS.ErrnoException).code;
    throw new ImportError(`${input}: ${code === 'ENOENT' ? 'no such file' : `cannot be read (${code})`}`, input);
  }
  if (stat.isDirectory()) throw new ImportError(`${input}: is a folder; expected a JSON Lines or CSV log`, input);
  let same = false;
  try {
    same = realpathSync(input) === realpathSync(out);
  } catch {
    // OUT does not exist yet: it cannot be the input
  }
  if (same) throw new ImportError(`${out}: is the log being imported; give another name for the step file`, out);
}

function fileStamp(path: string): string {
  const s = statSync(path);
  return `${s.size}:${s.mtimeMs}`;
}

/** The second pass must see the log the first one judged; a log still being written does not qualify. */
function sameLog(input: string, first: ScanResult, second: ScanResult, stamp: string): void {
  if (first.lines !== second.lines || first.steps !== second.steps || first.skippedLines !== second.skippedLines || fileStamp(input) !== stamp) {
    throw new ImportError(`${input}: changed while it was being imported (is something still writing it?); nothing was written`, input);
  }
}

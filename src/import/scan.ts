/**
 * One pass over a log, streamed: the file is read in 1 MiB chunks, split into lines (JSON Lines)
 * or records (CSV), each parsed into a StepRow, checked against the order rules and handed to a
 * sink. Nothing of the log is kept but the current chunk and, with --skip-bad, the list of
 * skipped lines. The importer runs this twice: once to learn the sizes and count, once to write.
 */
import { createReadStream } from 'node:fs';
import { csvLayout, csvScratch, parseCsvStep, type CsvLayout, type CsvScratch } from './csv-row.ts';
import { CsvSplitter, type CsvRecord } from './csv.ts';
import { FieldProblem, ImportError, lineError, lineMessage } from './errors.ts';
import { emptyRow, type LineShape, type StepRow } from './fields.ts';
import { parseJsonStep } from './jsonl-row.ts';
import { LineSplitter } from './lines.ts';
import { FollowOnProblem, StepSequence, type StepSink } from './sequence.ts';

export type LogFormat = 'jsonl' | 'csv';

/** A skipped line, or a run of lines skipped for one reason. */
export interface SkippedLines {
  line: number;
  /** Equal to `line` for one line. */
  lastLine: number;
  /** `log.jsonl line 17: q has 3 values; expected 2 (one per action)`. */
  message: string;
}

export interface ScanSettings {
  path: string;
  /** The log's name in messages: the path as the user gave it. */
  label: string;
  format: LogFormat;
  /** Filled in as the pass learns D and A (from a CSV header row or the first valid line). */
  shape: LineShape;
  skipBad: boolean;
  /** The step each episode starts at, when an earlier pass found it. */
  firstStep: number | null;
}

export interface ScanResult {
  /** Step lines read (JSON Lines: non-blank lines; CSV: records after the header row). */
  lines: number;
  steps: number;
  episodes: number;
  skippedLines: number;
  skipped: SkippedLines[];
  firstStep: number;
  logEpisodes: number[];
  /** Fields (JSON) or columns (CSV) the import does not read. */
  ignored: string[];
  /** Dimension names a CSV header gives (state.x, state.v), if it does. */
  stateNames: string[] | null;
}

const CHUNK = 1 << 20;

export async function scanLog(settings: ScanSettings, sink: StepSink): Promise<ScanResult> {
  const pass = new Pass(settings, sink);
  const splitter = settings.format === 'csv' ? csvFeed(pass) : jsonFeed(pass);
  let first = true;
  const stream = createReadStream(settings.path, { encoding: 'utf8', highWaterMark: CHUNK });
  try {
    for await (const chunk of stream) {
      let text = chunk as string;
      // A byte-order mark (spreadsheet programs write one) is not part of the first field.
      if (first && text.charCodeAt(0) === 0xfeff) text = text.slice(1);
      first = false;
      splitter.push(text);
    }
    splitter.end();
  } catch (e) {
    if (e instanceof ImportError) throw e;
    const code = (e as NodeJS.ErrnoException).code;
    if (code) throw new ImportError(`${settings.label}: cannot be read (${code})`, settings.label);
    // The splitters' one complaint: a line too long to be a step.
    throw new ImportError(`${settings.label} ${(e as Error).message}`, settings.label);
  }
  return pass.finish();
}

interface Feed {
  push(text: string): void;
  end(): void;
}

function jsonFeed(pass: Pass): Feed {
  const lines = new LineSplitter();
  const emit = (text: string, line: number) => pass.jsonLine(text, line);
  return { push: (t) => lines.push(t, emit), end: () => lines.end(emit) };
}

function csvFeed(pass: Pass): Feed {
  const records = new CsvSplitter();
  const emit = (r: CsvRecord) => pass.csvRecord(r);
  return { push: (t) => records.push(t, emit), end: () => records.end(emit) };
}

class Pass {
  private readonly row: StepRow = emptyRow();
  private sequence: StepSequence | null = null;
  private readonly counts = { lines: 0, steps: 0, episodes: 0, skippedLines: 0 };
  private readonly skipped: SkippedLines[] = [];
  /** Record number of the last skip, to join follow-on skips of consecutive records into one run. */
  private lastSkipRecord = -2;
  private record = 0;
  /** CSV: columns not read, known from the header row. */
  private ignored: string[] | null = null;
  /** JSON Lines: keys seen that are not fields. */
  private readonly unknownKeys = new Set<string>();
  private layout: CsvLayout | null = null;
  private scratch: CsvScratch | null = null;
  /** The follow-on reason of the last skip, when it was one. */
  private lastFollowOn: string | null = null;
  private readonly sink: StepSink;

  constructor(
    private readonly s: ScanSettings,
    target: StepSink,
  ) {
    this.sink = {
      step: (row) => {
        this.counts.steps++;
        target.step(row);
      },
      endEpisode: (end) => {
        this.counts.episodes++;
        target.endEpisode(end);
      },
    };
  }

  jsonLine(text: string, line: number): void {
    if (text.trim() === '') return; // a blank line (often the last) is no step
    this.begin();
    try {
      parseJsonStep(text, this.s.shape, this.row, this.unknownKeys);
    } catch (e) {
      return this.bad(e, line, line);
    }
    this.take(line);
  }

  csvRecord(r: CsvRecord): void {
    if (!this.layout) return this.readHeader(r);
    this.begin();
    if (r.problem) return this.bad(new FieldProblem(null, r.problem), r.line, r.lastLine);
    try {
      parseCsvStep(r.fields, this.layout, this.s.shape, this.row, this.scratch!);
    } catch (e) {
      return this.bad(e, r.line, r.lastLine);
    }
    this.take(r.line);
  }

  finish(): ScanResult {
    if (this.s.format === 'csv' && !this.layout) throw new ImportError(`${this.s.label}: is empty; expected a header row naming the columns, then one row per step`, this.s.label);
    this.sequence?.finish();
    return {
      ...this.counts,
      skipped: this.skipped,
      firstStep: this.sequence?.firstStep ?? 0,
      logEpisodes: this.sequence?.logEpisodes ?? [],
      ignored: this.ignored ?? [...this.unknownKeys],
      stateNames: this.layout?.stateNames ?? null,
    };
  }

  private readHeader(r: CsvRecord): void {
    const fail = (p: FieldProblem) => lineError(this.s.label, r.line, p);
    if (r.problem) throw fail(new FieldProblem(null, `(the header row) ${r.problem}`));
    const shape = this.s.shape;
    let layout: CsvLayout;
    try {
      layout = csvLayout(r.fields, shape.stateNames, shape.actionIndex ? [...shape.actionIndex.keys()] : null);
    } catch (e) {
      if (e instanceof FieldProblem) throw fail(e);
      throw e;
    }
    if (shape.D !== null && layout.D !== shape.D) throw fail(new FieldProblem('state', `has ${layout.D} columns; expected ${shape.D}`));
    if (shape.A !== null && layout.A !== shape.A) throw fail(new FieldProblem('q', `has ${layout.A} columns; expected ${shape.A}`));
    shape.D = layout.D;
    shape.A = layout.A;
    this.layout = layout;
    this.scratch = csvScratch(layout);
    this.ignored = layout.ignored;
  }

  private begin(): void {
    this.counts.lines++;
    this.record++;
    // -1 tells a line whose step could not be read from one whose step could.
    this.row.episode = -1;
    this.row.step = -1;
  }

  /** The row parsed: check its place in the log and pass it on. */
  private take(line: number): void {
    const row = this.row;
    const sequence = this.startSequence(row.step);
    const problem = sequence.check(row);
    if (problem) return this.bad(problem, line, line);
    const shape = this.s.shape;
    shape.D ??= row.state.length;
    shape.A ??= row.q.length;
    try {
      sequence.accept(row, line);
    } catch (e) {
      // The recorder refusing a row the parser passed would be a bug here; still name the line.
      throw new ImportError(`${this.s.label} line ${line}: ${(e as Error).message}`, this.s.label, line);
    }
  }

  /** The first step number read decides where episodes start: 1 for a log that counts from 1. */
  private startSequence(step: number): StepSequence {
    this.sequence ??= new StepSequence(this.sink, this.s.firstStep ?? (step === 1 ? 1 : 0));
    return this.sequence;
  }

  private bad(e: unknown, line: number, lastLine: number): void {
    if (!(e instanceof FieldProblem)) throw e;
    if (this.row.step >= 0) this.startSequence(this.row.step);
    if (!this.s.skipBad) throw lineError(this.s.label, line, e);
    this.counts.skippedLines++;
    this.sequence?.skipped(line, this.row.episode);
    const followOn = e instanceof FollowOnProblem ? e.message : null;
    const prev = this.skipped[this.skipped.length - 1];
    if (followOn !== null && followOn === this.lastFollowOn && this.lastSkipRecord === this.record - 1) {
      prev.lastLine = lastLine;
      prev.message = `${this.s.label} lines ${prev.line}–${lastLine}: ${followOn}`;
    } else {
      this.skipped.push({ line, lastLine, message: lineMessage(this.s.label, line, e) });
    }
    this.lastFollowOn = followOn;
    this.lastSkipRecord = this.record;
  }
}

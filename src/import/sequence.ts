/**
 * The order rules of an imported log (fields.ts): episodes contiguous with rising numbers, steps
 * rising by 1 from the episode's first step, nothing after a terminal or truncated step. `check`
 * judges a parsed row against what came before without changing anything; `accept` hands it on
 * and closes the previous episode when a new one begins. Pure apart from the sink it feeds.
 *
 * A step file holds no gap inside an episode, so when a line is skipped (--skip-bad) the lines of
 * the same episode after it are skipped too, and the episode ends where its good steps end.
 */
import { FieldProblem } from './errors.ts';
import type { StepRow } from './fields.ts';
import type { EpisodeEndInput } from '../record/types.ts';

/** Where accepted steps and episode ends go: the recorder on the writing pass, counters before it. */
export interface StepSink {
  step(row: StepRow): void;
  endEpisode(end: EpisodeEndInput): void;
}

interface OpenEpisode {
  episode: number;
  lastStep: number;
  lastLine: number;
  endedBy: 'terminal' | 'truncated' | null;
  /** First line skipped since the last accepted step of this episode, if any. */
  skippedFrom: number | null;
  failed: boolean | undefined;
  finalState: Float64Array | null;
  finalQ: Float64Array | null;
  mode: string | undefined;
  reason: string | undefined;
}

/** A problem that exists only because an earlier line was skipped: reported as one run of lines. */
export class FollowOnProblem extends FieldProblem {}

export class StepSequence {
  private open: OpenEpisode | null = null;
  /** Last episode that ended, so a line cannot go back to it or before it. */
  private lastEpisode: { episode: number; line: number } | null = null;
  /** The log's own episode numbers, in order: the step file numbers them 0, 1, 2, … */
  readonly logEpisodes: number[] = [];
  /** A skipped line that would have begun a new episode: the later lines of that episode follow on. */
  private skippedStart: { episode: number; line: number } | null = null;
  private finalStateBuf: Float64Array | null = null;
  private finalQBuf: Float64Array | null = null;

  constructor(
    private readonly sink: StepSink,
    /** The step every episode starts at: 0, or 1 for a log that counts from 1. */
    readonly firstStep: number,
  ) {}

  /** Why `row` cannot come next, or null. Changes nothing. */
  check(row: StepRow): FieldProblem | null {
    const open = this.open;
    if (open && row.episode === open.episode) {
      if (open.skippedFrom !== null && (open.endedBy || row.step !== open.lastStep + 1)) {
        const why = open.endedBy ? `the episode ended at its ${open.endedBy} step at line ${open.lastLine}` : 'a step file holds no gap inside an episode';
        return new FollowOnProblem(null, `rest of episode ${row.episode} after skipped line ${open.skippedFrom} (${why})`);
      }
      if (open.endedBy) {
        return new FieldProblem('episode', `${row.episode} goes on after its ${open.endedBy} step ${open.lastStep} (line ${open.lastLine}) with step ${row.step}; a terminal or truncated step ends its episode`);
      }
      if (row.step !== open.lastStep + 1) {
        return new FieldProblem('step', `${row.step} follows step ${open.lastStep} of episode ${row.episode} (line ${open.lastLine}); expected ${open.lastStep + 1} (steps go up by 1)`);
      }
      return null;
    }
    const before = open ? { episode: open.episode, line: open.lastLine } : this.lastEpisode;
    if (before && row.episode <= before.episode) {
      return new FieldProblem('episode', `${row.episode} comes after episode ${before.episode} (line ${before.line}); episode numbers must go up (the steps of an episode are contiguous)`);
    }
    if (row.step !== this.firstStep) {
      if (this.skippedStart?.episode === row.episode) {
        return new FollowOnProblem(null, `rest of episode ${row.episode} after skipped line ${this.skippedStart.line} (a step file holds no gap inside an episode)`);
      }
      return new FieldProblem('step', `${row.step} starts episode ${row.episode}; expected ${this.firstStep} (${this.firstStep === 0 ? 'steps count from 0 in every episode' : 'this log counts steps from 1'})`);
    }
    return null;
  }

  /** Take a row that passed `check`. */
  accept(row: StepRow, line: number): void {
    let open = this.open;
    if (open && row.episode !== open.episode) {
      this.close();
      open = null;
    }
    if (!open) {
      open = this.open = {
        episode: row.episode, lastStep: row.step, lastLine: line, endedBy: null, skippedFrom: null,
        failed: undefined, finalState: null, finalQ: null, mode: undefined, reason: undefined,
      };
      this.logEpisodes.push(row.episode);
      this.skippedStart = null;
    }
    this.sink.step(row);
    open.lastStep = row.step;
    open.lastLine = line;
    open.endedBy = row.terminal ? 'terminal' : row.truncated ? 'truncated' : null;
    open.skippedFrom = null;
    open.failed = row.failed;
    open.mode = row.mode;
    open.reason = row.reason;
    // The end fields may sit on every line; copy them into buffers kept for the import's length.
    open.finalState = row.finalState ? (this.finalStateBuf = copyInto(this.finalStateBuf, row.finalState)) : null;
    open.finalQ = row.finalQ ? (this.finalQBuf = copyInto(this.finalQBuf, row.finalQ)) : null;
  }

  /**
   * A line was skipped: the open episode cannot go on past it without a gap, nor can the episode
   * it would have begun. `episode` is the line's episode number, or −1 when it could not be read.
   */
  skipped(line: number, episode: number): void {
    if (this.open && this.open.skippedFrom === null) this.open.skippedFrom = line;
    const begins = episode >= 0 && episode !== this.open?.episode && episode !== this.skippedStart?.episode;
    if (begins) this.skippedStart = { episode, line };
  }

  /** The log has ended: end the open episode. */
  finish(): void {
    if (this.open) this.close();
  }

  private close(): void {
    const e = this.open!;
    const outcome = e.endedBy ?? 'ended';
    const cut = e.endedBy === null && e.skippedFrom !== null;
    const end: EpisodeEndInput = {
      outcome,
      failed: e.failed ?? outcome === 'terminal',
      reason: cut ? `cut short: line ${e.skippedFrom} and the rest of the episode were skipped on import` : (e.reason ?? ''),
      mode: e.mode ?? 'train',
    };
    if (e.finalState) end.finalState = e.finalState;
    if (e.finalQ) end.finalQ = e.finalQ;
    this.sink.endEpisode(end);
    this.lastEpisode = { episode: e.episode, line: e.lastLine };
    this.open = null;
  }
}

function copyInto(buf: Float64Array | null, from: ArrayLike<number>): Float64Array {
  const out = buf && buf.length === from.length ? buf : new Float64Array(from.length);
  for (let i = 0; i < from.length; i++) out[i] = from[i];
  return out;
}

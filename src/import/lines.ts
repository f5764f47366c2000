/**
 * A streaming line splitter for JSON Lines: chunks of text in, lines out with their 1-based
 * numbers. A line ends at LF; a CR before it is dropped (files written on Windows). Only the
 * unfinished tail of a chunk is held back, so memory is one chunk plus one line.
 */

/** Longest line held: one step is a few hundred bytes; a line this long is not a step. */
export const MAX_LINE_CHARS = 64 * 1024 * 1024;

export class LineSplitter {
  private tail = '';
  private line = 0;

  push(chunk: string, emit: (text: string, line: number) => void): void {
    let start = 0;
    let nl = chunk.indexOf('\n');
    if (nl >= 0 && this.tail !== '') {
      emit(this.strip(this.tail + chunk.slice(0, nl)), ++this.line);
      this.tail = '';
      start = nl + 1;
      nl = chunk.indexOf('\n', start);
    }
    while (nl >= 0) {
      emit(this.strip(chunk.slice(start, nl)), ++this.line);
      start = nl + 1;
      nl = chunk.indexOf('\n', start);
    }
    this.tail += chunk.slice(start);
    if (this.tail.length > MAX_LINE_CHARS) {
      throw new Error(`line ${this.line + 1}: longer than ${MAX_LINE_CHARS} characters; JSON Lines holds one step per line`);
    }
  }

  /** The input has ended: the last line need not end in LF. */
  end(emit: (text: string, line: number) => void): void {
    if (this.tail !== '') emit(this.strip(this.tail), ++this.line);
    this.tail = '';
  }

  private strip(text: string): string {
    return text.length > 0 && text.charCodeAt(text.length - 1) === 13 ? text.slice(0, -1) : text;
  }
}

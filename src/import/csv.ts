/**
 * A streaming CSV record splitter after RFC 4180 (Shafranovich 2005, §2): fields separated by
 * commas, records by CRLF (a bare LF or CR is taken too), a field may be enclosed in double
 * quotes and then holds commas, line breaks and doubled quotes ("" for one "). Chunks of text go
 * in as they arrive from the file; whole records come out with the line each starts on, so an
 * error can name the line even when a quoted field spans several. Blank lines are skipped.
 *
 * A record that breaks the rules (a quote inside an unquoted field, text after a closing quote)
 * comes out with a `problem` rather than stopping the split: with --skip-bad the import goes on.
 */

export interface CsvRecord {
  fields: string[];
  /** Line the record starts on (1-based). */
  line: number;
  /** Line it ends on: later than `line` when a quoted field holds line breaks. */
  lastLine: number;
  problem: string | null;
}

/** Longest field the splitter holds: a log's cell is a few bytes; more is a quote that never closes. */
export const MAX_FIELD_CHARS = 64 * 1024 * 1024;

const enum At {
  /** At the start of a field. */
  FieldStart,
  Unquoted,
  Quoted,
  /** Just after a double quote inside a quoted field: either "" or the closing quote. */
  QuoteInQuoted,
  /** After a problem: skip to the end of the record. */
  Junk,
}

export class CsvSplitter {
  private at: At = At.FieldStart;
  private fields: string[] = [];
  /** Text of the current field gathered from earlier chunks. */
  private pending = '';
  private line = 1;
  private recordLine = 1;
  private hasContent = false;
  /** The last character was a CR outside quotes: an LF right after it is the same line break. */
  private afterCR = false;
  /** The last character was a CR inside quotes (for counting lines only). */
  private quotedCR = false;
  private problem: string | null = null;

  push(chunk: string, emit: (r: CsvRecord) => void): void {
    let start = 0; // where the current field's text begins in this chunk
    const n = chunk.length;
    for (let i = 0; i < n; i++) {
      const c = chunk.charCodeAt(i);
      if (this.afterCR) {
        this.afterCR = false;
        if (c === 10) {
          start = i + 1;
          continue;
        }
      }
      if (this.at === At.FieldStart) {
        if (c === 34) {
          this.at = At.Quoted;
          this.hasContent = true;
          start = i + 1;
          continue;
        }
        // Anything else begins an unquoted field, and is read as part of it just below.
        this.at = At.Unquoted;
        start = i;
      }
      switch (this.at) {
        case At.Unquoted:
          if (c === 44) {
            this.endField(chunk.slice(start, i));
            start = i + 1;
          } else if (c === 10 || c === 13) {
            this.endField(chunk.slice(start, i));
            this.endRecord(c, emit);
            start = i + 1;
          } else if (c === 34) {
            this.fail(`a double quote inside unquoted field ${this.fields.length + 1}; RFC 4180 §2 allows quotes only in a field enclosed in quotes, doubled ("")`);
          } else this.hasContent = true;
          break;
        case At.Quoted:
          if (c === 34) {
            this.pending += chunk.slice(start, i);
            this.at = At.QuoteInQuoted;
          } else if (c === 13) {
            this.line++;
            this.quotedCR = true;
            continue;
          } else if (c === 10) {
            if (!this.quotedCR) this.line++;
          }
          this.quotedCR = false;
          break;
        case At.QuoteInQuoted:
          if (c === 34) {
            // "" inside quotes is one quote: it starts the next piece of the field's text.
            this.at = At.Quoted;
            start = i;
          } else if (c === 44) {
            this.endField('');
            start = i + 1;
          } else if (c === 10 || c === 13) {
            this.endField('');
            this.endRecord(c, emit);
            start = i + 1;
          } else {
            this.fail(`text after the closing quote of field ${this.fields.length + 1}; expected a comma or the end of the line`);
          }
          break;
        case At.Junk:
          if (c === 10 || c === 13) {
            this.endRecord(c, emit);
            start = i + 1;
          }
          break;
      }
    }
    if (this.at === At.Unquoted || this.at === At.Quoted) this.pending += chunk.slice(start);
    if (this.pending.length > MAX_FIELD_CHARS) {
      throw new Error(`line ${this.recordLine}: a field longer than ${MAX_FIELD_CHARS} characters (a quoted field that never closes?)`);
    }
  }

  /** The input has ended: hand out the last record, which need not end in a line break. */
  end(emit: (r: CsvRecord) => void): void {
    if (this.at === At.Quoted) {
      this.problem ??= `a quoted field opened on line ${this.recordLine} never closes (the file ends inside it)`;
      this.at = At.Junk;
    }
    // "a,b," ends in an empty field; so does a file ending right after a closing quote.
    if (this.at === At.QuoteInQuoted || this.at === At.Unquoted || (this.at === At.FieldStart && this.fields.length > 0)) this.endField('');
    if (this.hasContent || this.fields.length > 0 || this.problem) this.emit(emit);
  }

  private endField(tail: string): void {
    this.fields.push(this.pending + tail);
    this.pending = '';
    this.at = At.FieldStart;
  }

  private endRecord(breakChar: number, emit: (r: CsvRecord) => void): void {
    // A line holding nothing is a blank line, not a record with one empty field.
    if (this.hasContent || this.fields.length > 1 || this.problem) this.emit(emit);
    else this.reset();
    this.line++;
    this.recordLine = this.line;
    if (breakChar === 13) this.afterCR = true;
  }

  private emit(emit: (r: CsvRecord) => void): void {
    emit({ fields: this.fields, line: this.recordLine, lastLine: this.line, problem: this.problem });
    this.reset();
  }

  private reset(): void {
    this.fields = [];
    this.pending = '';
    this.at = At.FieldStart;
    this.hasContent = false;
    this.problem = null;
  }

  private fail(problem: string): void {
    this.problem ??= problem;
    this.at = At.Junk;
  }
}

/**
 * Errors of an import. A problem with one line of a log is a `FieldProblem` while the line is
 * parsed (the parser does not know the file or the line number); the importer turns it into an
 * `ImportError` that names the file, the line and the field, as `log.jsonl line 17: q has 3
 * values; expected 2 (one per action)`.
 */

/** What is wrong with one field of one line, before the file and line are known. */
export class FieldProblem extends Error {
  override readonly name = 'FieldProblem';
  constructor(
    /** The field (JSON key, CSV column, `state[2]`, …), or null for the line as a whole. */
    readonly field: string | null,
    readonly detail: string,
  ) {
    super(field === null ? detail : `${field} ${detail}`);
  }
}

/** An import that cannot go on. `line` and `field` are set when one line of the log is to blame. */
export class ImportError extends Error {
  override readonly name = 'ImportError';
  constructor(
    message: string,
    readonly file: string | null = null,
    readonly line: number | null = null,
    readonly field: string | null = null,
  ) {
    super(message);
  }
}

/** `log.jsonl line 17: q has 3 values; expected 2 (one per action)`. */
export function lineMessage(file: string, line: number, problem: FieldProblem): string {
  return `${file} line ${line}: ${problem.message}`;
}

export function lineError(file: string, line: number, problem: FieldProblem): ImportError {
  return new ImportError(lineMessage(file, line, problem), file, line, problem.field);
}

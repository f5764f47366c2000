/**
 * The one error type the step-file codec throws. `problem` tells a crashed recorder ("cut-short":
 * the file simply ends early, whole records before it are good) from damage ("corrupt": bytes that
 * are there but wrong) and from files that are not step files at all ("not-a-step-file").
 */

export type StepFileProblem = 'cut-short' | 'corrupt' | 'not-a-step-file' | 'unsupported' | 'not-found';

export class StepFileError extends Error {
  override readonly name = 'StepFileError';
  constructor(
    readonly problem: StepFileProblem,
    /** The file's name as the user gave it. */
    readonly file: string,
    /** Byte offset of the record (or byte) concerned, when there is one. */
    readonly offset: number | null,
    readonly detail: string,
  ) {
    super(`${file}${offset === null ? '' : ` at byte ${offset}`}: ${detail}`);
  }
}

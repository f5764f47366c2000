/** Bad input to the recorder: names the call, the field, the value and what was expected. */
export class RecordError extends Error {
  override readonly name = 'RecordError';
  constructor(
    readonly call: string,
    readonly field: string,
    detail: string,
  ) {
    super(`${call}: ${field} ${detail}`);
  }
}

/** Where a command writes; the entry point binds these to the process, tests to strings. */
export interface CommandIO {
  out(text: string): void;
  err(text: string): void;
}

export type Command = (argv: string[], io: CommandIO) => Promise<void> | void;

/** Binds the CLI to the process: stdout, stderr (with back-pressure for long output), exit code. */
import { writeSync } from 'node:fs';
import { runCli } from './main.ts';
import './commands.ts';

function writeAll(fd: number, text: string): void {
  const bytes = Buffer.from(text, 'utf8');
  let done = 0;
  while (done < bytes.length) {
    try {
      done += writeSync(fd, bytes, done);
    } catch (e) {
      // A pipe that is full says EAGAIN; a reader that went away (| head) ends the output quietly.
      const code = (e as NodeJS.ErrnoException).code;
      if (code === 'EAGAIN') continue;
      if (code === 'EPIPE') process.exit(0);
      throw e;
    }
  }
}

export async function main(argv: string[]): Promise<void> {
  const code = await runCli(argv, { out: (t) => writeAll(1, t), err: (t) => writeAll(2, t) });
  process.exitCode = code;
}

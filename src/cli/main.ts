/**
 * The `episcope` command. Every failure the user can fix (unknown flag, missing file, bad number,
 * damaged file) is one line on stderr and exit code 2; anything else is a bug and shows its stack.
 */
import { UsageError } from './args.ts';
import type { Command, CommandIO } from './io.ts';
import { dumpCommand, dumpUsage } from './dump.ts';
import { summaryCommand, summaryUsage } from './summary.ts';

interface Entry {
  run: Command;
  usage: string;
  what: string;
}

const commands: Record<string, Entry> = {
  summary: { run: summaryCommand, usage: summaryUsage, what: 'one row per episode: steps, return, outcome, Q range, flips' },
  dump: { run: dumpCommand, usage: dumpUsage, what: "an episode's steps as a table or JSON" },
};

export function registerCommand(name: string, entry: Entry): void {
  commands[name] = entry;
}

export function helpText(): string {
  const lines = ['episcope — find where a deep Q-learning agent’s value estimates went wrong', '', 'commands:'];
  for (const [, c] of Object.entries(commands)) lines.push(`  ${c.usage}`, `      ${c.what}`);
  return lines.join('\n');
}

export async function runCli(argv: string[], io: CommandIO): Promise<number> {
  const [name, ...rest] = argv;
  if (!name || name === '--help' || name === '-h' || name === 'help') {
    io.out(helpText() + '\n');
    return name ? 0 : 2;
  }
  const entry = commands[name];
  if (!entry) {
    io.err(`episcope: unknown command "${name}" (commands: ${Object.keys(commands).join(', ')})\n`);
    return 2;
  }
  if (rest.includes('--help') || rest.includes('-h')) {
    io.out(`usage: ${entry.usage}\n  ${entry.what}\n`);
    return 0;
  }
  try {
    await entry.run(rest, io);
    return 0;
  } catch (e) {
    if (e instanceof UsageError) {
      io.err(e.message + '\n');
      return 2;
    }
    throw e;
  }
}

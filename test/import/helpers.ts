/**
 * Shared by the import tests: a scratch folder, a CommandIO that collects what a command writes,
 * a runner that turns UsageError into exit code 2 as the CLI entry point does, and a seeded log
 * of steps to write as JSON Lines or CSV and compare against what a step file reads back.
 */
import { mkdtempSync, readdirSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { UsageError } from '../../src/cli/args.ts';
import type { CommandIO } from '../../src/cli/io.ts';
import { seeded } from '../net/helpers.ts';

export function scratchFolder(prefix: string): { dir: string; path: (name: string) => string; files: () => string[]; remove: () => void } {
  const dir = mkdtempSync(join(tmpdir(), `episcope-${prefix}-`));
  return { dir, path: (name) => join(dir, name), files: () => readdirSync(dir).sort(), remove: () => rmSync(dir, { recursive: true, force: true }) };
}

export interface Ran {
  code: number;
  out: string;
  err: string;
}

/** Run a command as runCli would: a UsageError is one line on stderr and exit code 2. */
export async function runCommand(command: (argv: string[], io: CommandIO) => Promise<void> | void, argv: string[]): Promise<Ran> {
  let out = '';
  let err = '';
  const io: CommandIO = { out: (t) => void (out += t), err: (t) => void (err += t) };
  try {
    await command(argv, io);
    return { code: 0, out, err };
  } catch (e) {
    if (e instanceof UsageError) return { code: 2, out, err: err + e.message + '\n' };
    throw e;
  }
}

/** One step of a test log, with the values as the log holds them (numbers, before float32). */
export interface LogStep {
  episode: number;
  step: number;
  state: number[];
  action: number;
  reward: number;
  terminal: boolean;
  truncated: boolean;
  explored: boolean;
  epsilon: number | undefined;
  q: number[];
  failed?: boolean;
  finalState?: number[];
  finalQ?: number[];
  mode?: string;
  reason?: string;
}

/**
 * A log of `episodes` episodes, D = 3, A = 2, with every field exercised: episodes ending
 * terminal, truncated and neither; explored steps; ε on some steps only; NaN and ±Infinity in
 * state, reward and Q; end fields on last lines.
 */
export function seededLog(seed: number, episodes: number): LogStep[] {
  const rand = seeded(seed);
  const steps: LogStep[] = [];
  const value = () => (rand() * 2 - 1) * 10 ** Math.floor(rand() * 6 - 3);
  const specials = [NaN, Infinity, -Infinity];
  for (let e = 0; e < episodes; e++) {
    const length = 1 + Math.floor(rand() * 12);
    const ending = e % 3; // 0 terminal, 1 truncated, 2 neither ('ended')
    for (let t = 0; t < length; t++) {
      const last = t === length - 1;
      const s: LogStep = {
        episode: e,
        step: t,
        state: [value(), value(), value()],
        action: rand() < 0.5 ? 0 : 1,
        reward: rand() < 0.1 ? specials[Math.floor(rand() * 3)] : value(),
        terminal: last && ending === 0,
        truncated: last && ending === 1,
        explored: rand() < 0.3,
        epsilon: rand() < 0.7 ? rand() : undefined,
        q: [rand() < 0.1 ? specials[Math.floor(rand() * 3)] : value(), value()],
      };
      if (rand() < 0.05) s.state[1] = specials[Math.floor(rand() * 3)];
      if (last) {
        if (e % 4 === 1) s.failed = e % 8 === 1;
        if (e % 2 === 0) s.finalState = [value(), value(), value()];
        if (e % 5 === 0) s.finalQ = [value(), value()];
        if (e % 3 === 2) s.mode = 'eval';
        if (e % 2 === 1) s.reason = `reason "${e}", with a comma`;
      }
      steps.push(s);
    }
  }
  return steps;
}

/** A number as a JSON Lines log writes it: non-finite ones as the strings of the import format. */
export const jsonValue = (v: number): number | string => (Number.isFinite(v) ? v : String(v));

export function toJsonl(steps: LogStep[], eol = '\n'): string {
  return steps
    .map((s) => {
      const o: Record<string, unknown> = {
        episode: s.episode,
        step: s.step,
        state: s.state.map(jsonValue),
        action: s.action,
        reward: jsonValue(s.reward),
        terminal: s.terminal,
        truncated: s.truncated,
        q: s.q.map(jsonValue),
        explored: s.explored,
      };
      if (s.epsilon !== undefined) o.epsilon = s.epsilon;
      if (s.failed !== undefined) o.failed = s.failed;
      if (s.finalState) o.final_state = s.finalState.map(jsonValue);
      if (s.finalQ) o.final_q = s.finalQ.map(jsonValue);
      if (s.mode !== undefined) o.mode = s.mode;
      if (s.reason !== undefined) o.reason = s.reason;
      return JSON.stringify(o) + eol;
    })
    .join('');
}

/** A CSV field after RFC 4180 §2: quoted when it holds a comma, quote or line break, quotes doubled. */
export function csvField(text: string): string {
  return /[",\r\n]/.test(text) ? `"${text.replace(/"/g, '""')}"` : text;
}

const csvNumber = (v: number, style: number) => {
  if (Number.isFinite(v)) return String(v);
  // The spellings a CSV log may use for the same value, rotated through.
  const spellings = Number.isNaN(v) ? ['NaN', 'nan', 'NAN'] : v > 0 ? ['Infinity', 'inf', 'INF'] : ['-Infinity', '-inf', '-Inf'];
  return spellings[style % 3];
};

/** The log as CSV: state.x/v/w columns, q.left/q.right, actions by name, flags as true/1 alternately. */
export function toCsv(steps: LogStep[], eol = '\r\n'): string {
  const head = ['episode', 'step', 'state.x', 'state.v', 'state.w', 'action', 'reward', 'terminal', 'truncated', 'q.left', 'q.right', 'explored', 'epsilon', 'failed', 'final_state.x', 'final_state.v', 'final_state.w', 'final_q.0', 'final_q.1', 'mode', 'reason'];
  const flag = (b: boolean, i: number) => (i % 2 ? (b ? '1' : '0') : b ? 'true' : 'false');
  const rows = steps.map((s, i) =>
    [
      String(s.episode),
      String(s.step),
      ...s.state.map((v) => csvNumber(v, i)),
      ['left', 'right'][s.action],
      csvNumber(s.reward, i),
      flag(s.terminal, i),
      flag(s.truncated, i + 1),
      ...s.q.map((v) => csvNumber(v, i + 1)),
      flag(s.explored, i),
      s.epsilon === undefined ? '' : String(s.epsilon),
      s.failed === undefined ? '' : flag(s.failed, i),
      ...(s.finalState ? s.finalState.map((v) => csvNumber(v, i)) : ['', '', '']),
      ...(s.finalQ ? s.finalQ.map((v) => csvNumber(v, i)) : ['', '']),
      s.mode ?? '',
      s.reason ?? '',
    ]
      .map(csvField)
      .join(','),
  );
  return [head.join(','), ...rows].map((r) => r + eol).join('');
}

/** float32 equality that counts NaN as equal to NaN (it is a value to keep, not a failure). */
export const sameF32 = (got: number, want: number) => Object.is(got, Math.fround(want)) || (Number.isNaN(got) && Number.isNaN(want));

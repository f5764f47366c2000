/**
 * A log written as JSON Lines or CSV, imported, and read back with the step-file reader: every
 * value of every step and every episode end must come back as the log gave it (as float32 where
 * the format stores float32), and the header must say what the flags said.
 */
import { writeFileSync } from 'node:fs';
import { afterAll, describe, expect, it } from 'vitest';
import { openStepFilePath } from '../../formats/node.ts';
import { FLAG_EXPLORED, FLAG_TERMINAL, FLAG_TRUNCATED } from '../../formats/types.ts';
import { importCommand } from '../../src/cli/import.ts';
import { importLog } from '../../src/import/importer.ts';
import { runCommand, sameF32, scratchFolder, seededLog, toCsv, toJsonl, type LogStep } from './helpers.ts';

const scratch = scratchFolder('import-round-trip');
afterAll(() => scratch.remove());

/** Every value of `path` against the log it came from. */
function expectSameSteps(path: string, log: LogStep[]): void {
  const file = openStepFilePath(path);
  try {
    const episodes = [...new Set(log.map((s) => s.episode))];
    expect(file.episodes.map((e) => e.episode)).toEqual(episodes.map((_, i) => i));
    const D = file.header.stateDims.length;
    const A = file.header.actions.length;
    episodes.forEach((logEpisode, e) => {
      const want = log.filter((s) => s.episode === logEpisode);
      const got = file.readEpisode(e);
      expect(got.n).toBe(want.length);
      const bad: string[] = [];
      const check = (what: string, g: number, w: number) => {
        if (!sameF32(g, w)) bad.push(`episode ${e} ${what}: got ${g}, want ${Math.fround(w)}`);
      };
      // Differences are gathered and compared once: an expect per value would slow a long log down.
      const exact = (what: string, g: unknown, w: unknown) => {
        if (g !== w) bad.push(`episode ${e} ${what}: got ${g}, want ${w}`);
      };
      want.forEach((s, i) => {
        exact(`step ${i} step index`, got.step[i], s.step);
        for (let d = 0; d < D; d++) check(`step ${i} state[${d}]`, got.state[i * D + d], s.state[d]);
        for (let a = 0; a < A; a++) check(`step ${i} q[${a}]`, got.q[i * A + a], s.q[a]);
        check(`step ${i} reward`, got.reward[i], s.reward);
        exact(`step ${i} action`, got.action[i], s.action);
        exact(`step ${i} flags`, got.flags[i], (s.terminal ? FLAG_TERMINAL : 0) | (s.truncated ? FLAG_TRUNCATED : 0) | (s.explored ? FLAG_EXPLORED : 0));
        if (want.every((x) => x.epsilon === undefined)) exact('epsilon column', got.epsilon, null);
        else check(`step ${i} epsilon`, got.epsilon![i], s.epsilon ?? NaN);
      });
      expect(bad).toEqual([]);
      const last = want[want.length - 1];
      const end = got.end!;
      const outcome = last.terminal ? 'terminal' : last.truncated ? 'truncated' : 'ended';
      expect(end.length).toBe(want.length);
      // The recorder sums the rewards as the log gave them, in order: the same sum, NaN included.
      expect(end.return).toBe(want.reduce((sum, s) => sum + s.reward, 0));
      expect(end.outcome).toBe(outcome);
      expect(end.failed).toBe(last.failed ?? outcome === 'terminal');
      expect(end.mode).toBe(last.mode ?? 'train');
      expect(end.reason).toBe(last.reason ?? '');
      if (last.finalState) expect(Array.from(end.finalState!).every((v, d) => sameF32(v, last.finalState![d]))).toBe(true);
      else expect(end.finalState).toBeNull();
      if (last.finalQ) expect(Array.from(end.finalQ!).every((v, a) => sameF32(v, last.finalQ![a]))).toBe(true);
      else expect(end.finalQ).toBeNull();
    });
  } finally {
    file.close();
  }
}

describe('JSON Lines → step file', () => {
  it('keeps every field of every step and every episode end, and writes the header the flags give', async () => {
    const log = seededLog(1, 40);
    const input = scratch.path('run.jsonl');
    const out = scratch.path('run.steps');
    writeFileSync(input, toJsonl(log));
    const r = await runCommand(importCommand, [
      input, '-o', out, '--state-dims', 'x,v,w', '--units', 'm, m/s ,rad', '--actions', 'left,right', '--gamma', '0.95', '--system', 'test-rig',
    ]);
    expect(r.err).toBe('');
    expect(r.code).toBe(0);
    expect(r.out).toContain(`${log.length} steps in 40 episodes, D = 3, A = 2, from ${log.length} lines`);
    expectSameSteps(out, log);
    const file = openStepFilePath(out);
    expect(file.header.stateDims).toEqual([{ name: 'x', unit: 'm' }, { name: 'v', unit: 'm/s' }, { name: 'w', unit: 'rad' }]);
    expect(file.header.actions).toEqual(['left', 'right']);
    expect(file.header.gamma).toBe(0.95);
    expect(file.header.system).toMatchObject({ kind: 'test-rig', map: {} });
    expect(file.header.run).toEqual({ importedFrom: 'run.jsonl', format: 'jsonl', lines: log.length, skipped: 0 });
    expect(file.recovery.indexed).toBe(true);
    file.close();
  });

  it('streams a log of several MiB, across read chunks and step blocks, compressed, CRLF line ends', async () => {
    const log = seededLog(2, 3000);
    const input = scratch.path('long.jsonl');
    const text = toJsonl(log, '\r\n');
    expect(text.length).toBeGreaterThan(3 * (1 << 20)); // more than the importer's 1 MiB read chunk
    writeFileSync(input, text);
    const out = scratch.path('long.steps');
    const result = await importLog({ input, out, compress: true, blockSize: 4, gamma: 0.9 });
    expect(result).toMatchObject({ lines: log.length, steps: log.length, episodes: 3000, skippedLines: 0, D: 3, A: 2 });
    expectSameSteps(out, log);
  });

  it('names state dimensions s0, s1, … and actions a0, a1, …, takes γ = 0.99 and says so on stderr', async () => {
    const log = seededLog(3, 3);
    const input = scratch.path('plain.jsonl');
    writeFileSync(input, toJsonl(log));
    const out = scratch.path('plain.steps');
    const r = await runCommand(importCommand, [input, '-o', out]);
    expect(r.code).toBe(0);
    expect(r.err).toMatch(/^episcope import: no --gamma given; the header says γ = 0.99/);
    const file = openStepFilePath(out);
    expect(file.header.stateDims).toEqual(['s0', 's1', 's2'].map((name) => ({ name, unit: '' })));
    expect(file.header.actions).toEqual(['a0', 'a1']);
    expect(file.header.gamma).toBe(0.99);
    expect(file.header.system).toMatchObject({ kind: 'imported', map: {} });
    expect(file.header.createdAt).toBe('');
    file.close();
  });

  it('keeps the log’s own episode numbers in the run info when they are not 0, 1, 2, …, and reads a log that counts steps from 1', async () => {
    const log = seededLog(4, 3).map((s) => ({ ...s, episode: [5, 7, 8][s.episode], step: s.step + 1 }));
    const input = scratch.path('numbered.jsonl');
    writeFileSync(input, toJsonl(log) + '\n\n'); // blank lines at the end are not steps
    const out = scratch.path('numbered.steps');
    const r = await runCommand(importCommand, [input, '-o', out, '--gamma', '1']);
    expect(r.code).toBe(0);
    expect(r.err).toContain('the log numbers its episodes 5, 7, 8; the step file numbers them 0..2');
    expect(r.err).toContain('the log counts steps from 1');
    expectSameSteps(out, log.map((s) => ({ ...s, step: s.step - 1 })));
    const file = openStepFilePath(out);
    expect(file.header.run).toMatchObject({ logEpisodes: [5, 7, 8], logFirstStep: 1 });
    file.close();
  });

  it('keeps "NaN", "Infinity" and "-Infinity" as NaN and ±Infinity in state, reward, Q, ε and the final state', async () => {
    const input = scratch.path('nonfinite.jsonl');
    writeFileSync(
      input,
      JSON.stringify({ episode: 0, step: 0, state: ['NaN', 1], action: 0, reward: '-Infinity', terminal: false, truncated: true, q: ['Infinity', 'NaN'], epsilon: 'NaN', final_state: ['-Infinity', 'Infinity'] }) + '\n',
    );
    const out = scratch.path('nonfinite.steps');
    expect((await runCommand(importCommand, [input, '-o', out, '--gamma', '0.9'])).code).toBe(0);
    const file = openStepFilePath(out);
    const e = file.readEpisode(0);
    expect([...e.state, ...e.reward, ...e.q, ...e.epsilon!]).toEqual([NaN, 1, -Infinity, Infinity, NaN, NaN]);
    expect(Array.from(e.end!.finalState!)).toEqual([-Infinity, Infinity]);
    file.close();
  });

  it('reports fields it does not read, once', async () => {
    const input = scratch.path('extra.jsonl');
    const base = { episode: 0, step: 0, state: [1], action: 0, reward: 0, terminal: false, truncated: false, q: [0] };
    writeFileSync(input, JSON.stringify({ ...base, loss: 1 }) + '\n' + JSON.stringify({ ...base, step: 1, loss: 2, td: 0 }) + '\n');
    const r = await runCommand(importCommand, [input, '-o', scratch.path('extra.steps'), '--gamma', '0.9']);
    expect(r.code).toBe(0);
    expect(r.err).toBe('episcope import: ignored fields loss, td (not fields of an imported step)\n');
  });
});

describe('CSV → step file', () => {
  it('keeps every value through named state columns, q.<action> columns, action names, quoted text and CRLF', async () => {
    const log = seededLog(5, 40);
    const input = scratch.path('run.csv');
    const text = toCsv(log);
    expect(text).toContain('"reason ""1"", with a comma"'); // a quoted field with a comma and doubled quotes
    writeFileSync(input, text);
    const out = scratch.path('run-csv.steps');
    const r = await runCommand(importCommand, [input, '-o', out, '--actions', 'left,right', '--units', 'm,m/s,rad', '--gamma', '0.9']);
    expect(r.err).toBe('');
    expect(r.code).toBe(0);
    expectSameSteps(out, log);
    const file = openStepFilePath(out);
    expect(file.header.stateDims).toEqual([{ name: 'x', unit: 'm' }, { name: 'v', unit: 'm/s' }, { name: 'w', unit: 'rad' }]);
    expect(file.header.actions).toEqual(['left', 'right']);
    expect(file.header.run).toEqual({ importedFrom: 'run.csv', format: 'csv', lines: log.length, skipped: 0 });
    file.close();
  });

  it('reads a reason that holds a line break inside quotes, with LF line ends, and keeps the break', async () => {
    const log = seededLog(6, 6).map((s) => (s.reason ? { ...s, reason: 'fell over\nat "the" rim, hard' } : s));
    const input = scratch.path('multiline.csv');
    writeFileSync(input, toCsv(log, '\n'));
    const out = scratch.path('multiline.steps');
    expect((await runCommand(importCommand, [input, '-o', out, '--actions', 'left,right', '--gamma', '0.9'])).code).toBe(0);
    expectSameSteps(out, log);
  });

  it('reads state.0 … and q.0 … columns with action indices, and a byte-order mark before the header', async () => {
    const log = seededLog(7, 5);
    const csv = [
      'episode,step,state.0,state.1,state.2,action,reward,terminal,truncated,q.0,q.1',
      ...log.map((s) => [s.episode, s.step, ...s.state, s.action, s.reward, s.terminal, s.truncated, ...s.q].map(String).join(',')),
    ].join('\n');
    const input = scratch.path('indexed.csv');
    writeFileSync(input, '\ufeff' + csv + '\n');
    const out = scratch.path('indexed.steps');
    expect((await runCommand(importCommand, [input, '-o', out, '--gamma', '0.9'])).code).toBe(0);
    // This log has no end fields: the ends follow from the flags alone.
    expectSameSteps(out, log.map((s) => ({ ...s, explored: false, epsilon: undefined, failed: undefined, finalState: undefined, finalQ: undefined, mode: undefined, reason: undefined })));
  });
});

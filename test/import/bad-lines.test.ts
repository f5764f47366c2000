/**
 * Bad input: the error names the file, the line and the field and says what was expected, and
 * no output is left behind — neither OUT nor a partial file. With --skip-bad the good lines are
 * written and every skipped line is listed. An existing OUT is never replaced without --force.
 */
import { existsSync, readFileSync, writeFileSync } from 'node:fs';
import { afterAll, describe, expect, it } from 'vitest';
import { openStepFilePath } from '../../formats/node.ts';
import { importCommand } from '../../src/cli/import.ts';
import { writeStepFile } from '../../src/import/output.ts';
import { runCommand, scratchFolder } from './helpers.ts';

const scratch = scratchFolder('import-bad');
afterAll(() => scratch.remove());

type Line = Record<string, unknown>;
const step = (episode: number, t: number, more: Line = {}): Line => ({
  episode, step: t, state: [0.5, -1, 2], action: t % 2, reward: 1, terminal: false, truncated: false, q: [0.25, 0.5], ...more,
});
/** Two episodes of three steps; line n of the file is good[n − 1]. */
const good = (): Line[] => [step(0, 0), step(0, 1), step(0, 2, { terminal: true }), step(1, 0), step(1, 1), step(1, 2, { truncated: true })];
const without = (line: Line, key: string) => Object.fromEntries(Object.entries(line).filter(([k]) => k !== key));

let count = 0;
/** Import `text` as `name`; returns the run and the folder's files afterwards. */
async function importText(name: string, text: string, ...flags: string[]) {
  const sub = scratchFolder(`case-${++count}`);
  try {
    const input = sub.path(name);
    writeFileSync(input, text);
    const r = await runCommand(importCommand, [input, '-o', sub.path('out.steps'), '--gamma', '0.9', ...flags]);
    return { ...r, input, files: sub.files(), outPath: sub.path('out.steps'), sub };
  } catch (e) {
    sub.remove();
    throw e;
  }
}

const jsonl = (lines: (Line | string)[]) => lines.map((l) => (typeof l === 'string' ? l : JSON.stringify(l))).join('\n') + '\n';

describe('a bad JSON Lines line stops the import, names line and field, and leaves no file', () => {
  const edit = (n: number, f: (l: Line) => Line | string) => (lines: Line[]) => lines.map((l, i) => (i === n - 1 ? f(l) : l));
  const cases: [string, (lines: Line[]) => (Line | string)[], string, string[]?][] = [
    ['missing field', edit(3, (l) => without(l, 'reward')), 'line 3: reward is missing; expected a number'],
    ['missing flag', edit(2, (l) => without(l, 'truncated')), 'line 2: truncated is missing; expected true or false'],
    ['q of the wrong length', edit(5, (l) => ({ ...l, q: [1, 2, 3] })), 'line 5: q has 3 values; expected 2 (one per action)'],
    ['state of the wrong length', edit(4, (l) => ({ ...l, state: [1, 2] })), 'line 4: state has 2 values; expected 3 (the state dimensions)'],
    ['state longer than --state-dims', edit(1, (l) => ({ ...l, state: [1, 2, 3, 4] })), 'line 1: state has 4 values; expected 3 (the state dimensions: x, v, w)', ['--state-dims', 'x,v,w']],
    ['a reward that is not a number', edit(3, (l) => ({ ...l, reward: 'abc' })), 'line 3: reward "abc" is not a number; expected a number (or "NaN", "Infinity", "-Infinity")'],
    ['a state value that is not a number', edit(2, (l) => ({ ...l, state: [1, 'x', 3] })), 'line 2: state[1] "x" is not a number'],
    ['a flag that is not a boolean', edit(2, (l) => ({ ...l, terminal: 'yes' })), 'line 2: terminal "yes" is not true or false'],
    ['an action out of range', edit(4, (l) => ({ ...l, action: 5 })), 'line 4: action 5 is not one of 0..1'],
    ['an unknown action name', edit(2, (l) => ({ ...l, action: 'jump' })), 'line 2: action "jump" is not an action name (left, right) nor an index 0..1', ['--actions', 'left,right']],
    ['an action name without --actions', edit(2, (l) => ({ ...l, action: 'left' })), 'line 2: action "left" is not an action index 0..1 (give --actions to use names)'],
    ['a step gap', edit(5, (l) => ({ ...l, step: 2 })), 'line 5: step 2 follows step 0 of episode 1 (line 4); expected 1 (steps go up by 1)'],
    ['an episode going backwards', (lines) => [...lines, step(0, 3)], 'line 7: episode 0 comes after episode 1 (line 6); episode numbers must go up'],
    ['a step after the terminal step', (lines) => [...lines.slice(0, 3), step(0, 3), ...lines.slice(3)], 'line 4: episode 0 goes on after its terminal step 2 (line 3) with step 3'],
    ['an episode not starting at step 0', edit(4, (l) => ({ ...l, step: 3 })), 'line 4: step 3 starts episode 1; expected 0'],
    ['a line that is not JSON', edit(3, () => '{"episode": 0, "step": 2,'), 'line 3: is not JSON ('],
    ['a line that is not an object', edit(3, () => '[1, 2]'), 'line 3: is an array; expected a JSON object'],
    ['a negative episode', edit(1, (l) => ({ ...l, episode: -1 })), 'line 1: episode -1 is not a whole number ≥ 0'],
    ['a final_state of the wrong length', edit(3, (l) => ({ ...l, final_state: [1] })), 'line 3: final_state has 1 value; expected 3'],
  ];
  it.each(cases)('%s', async (_what, make, message, flags = []) => {
    const r = await importText('log.jsonl', jsonl(make(good())), ...flags);
    try {
      expect(r.code).toBe(2);
      expect(r.err).toContain(`episcope import: ${r.input} ${message}`);
      expect(r.err.trimEnd().split('\n')).toHaveLength(1);
      expect(r.out).toBe('');
      expect(r.files).toEqual(['log.jsonl']); // no OUT, no OUT.partial-<pid>
    } finally {
      r.sub.remove();
    }
  });
});

describe('a bad CSV row stops the import the same way', () => {
  const head = 'episode,step,state.0,state.1,action,reward,terminal,truncated,q.0,q.1';
  const rows = ['0,0,1,2,0,1,false,false,0.5,0.25', '0,1,1,2,1,1,false,false,0.5,0.25', '0,2,1,2,0,1,true,false,0.5,0.25', '1,0,1,2,0,1,false,false,0.5,0.25'];
  const csv = (edit: (rows: string[]) => string[], header = head) => [header, ...edit([...rows])].join('\r\n') + '\r\n';
  const set = (i: number, row: string) => (r: string[]) => r.map((x, j) => (j === i ? row : x));
  const cases: [string, string, string, string[]?][] = [
    ['a reward that is not a number', csv(set(2, '0,2,1,2,0,abc,true,false,0.5,0.25')), 'line 4: reward "abc" is not a number'],
    ['an empty required cell', csv(set(1, '0,1,1,,1,1,false,false,0.5,0.25')), 'line 3: state.1 is empty; expected a number'],
    ['a row with too few fields (a vector cut short)', csv(set(1, '0,1,1,2,1,1,false,false,0.5')), 'line 3: has 9 fields; the header row has 10'],
    ['a flag that is not a boolean', csv(set(0, '0,0,1,2,0,1,yes,false,0.5,0.25')), 'line 2: terminal "yes" is not true, false, 1 or 0'],
    ['an unknown action name', csv(set(1, '0,1,1,2,up,1,false,false,0.5,0.25')), 'line 3: action "up" is not an action name (left, right) nor an index 0..1', ['--actions', 'left,right']],
    ['an action out of range', csv(set(1, '0,1,1,2,2,1,false,false,0.5,0.25')), 'line 3: action 2 is not one of 0..1'],
    ['a step gap', csv(set(2, '0,3,1,2,0,1,true,false,0.5,0.25')), 'line 4: step 3 follows step 1 of episode 0 (line 3); expected 2'],
    ['an episode going backwards', csv((r) => [...r, '0,0,1,2,0,1,false,false,0.5,0.25']), 'line 6: episode 0 comes after episode 1 (line 5)'],
    ['a missing column', csv((r) => r.map((x) => x.split(',').filter((_, i) => i !== 5).join(',')), head.replace(',reward', '')), 'line 1: reward has no column; expected columns episode, step, state.0 …'],
    ['a gap in the state columns', csv((r) => r, head.replace('state.1', 'state.2')), 'line 1: state.1 has no column, but there are 2 state columns'],
    ['a q column that is not an action', csv((r) => r, head.replace('q.1', 'q.up')), 'line 1: q.up names an action, but no --actions was given'],
    ['a quote inside an unquoted field', csv(set(0, '0,0,1,2,0,1",false,false,0.5,0.25')), 'line 2: a double quote inside unquoted field 6'],
    ['a quoted field that never closes', csv(set(3, '1,0,"1,2,0,1,false,false,0.5,0.25')), 'line 5: a quoted field opened on line 5 never closes'],
  ];
  it.each(cases)('%s', async (_what, text, message, flags = []) => {
    const r = await importText('log.csv', text, ...flags);
    try {
      expect(r.code).toBe(2);
      expect(r.err).toContain(`episcope import: ${r.input} ${message}`);
      expect(r.files).toEqual(['log.csv']);
    } finally {
      r.sub.remove();
    }
  });
});

describe('--skip-bad', () => {
  it('writes the good lines, lists every skipped line with its reason and a count, and ends a cut episode where its good steps end', async () => {
    const lines: (Line | string)[] = [
      step(0, 0), step(0, 1), step(0, 2, { terminal: true }),      // lines 1–3: episode 0, whole
      step(1, 0), step(1, 1, { q: [1] }), step(1, 2), step(1, 3),  // line 5 bad: lines 6–7 follow on
      'not json',                                                  // line 8
      step(2, 0), step(2, 1, { action: 9 }),                       // line 10 bad, last of its episode
      step(3, 0), step(3, 1, { truncated: true }),                 // lines 11–12: episode 3, whole
      step(4, 0, { q: 'x' }), step(4, 1), step(4, 2),              // line 13 bad: 14–15 follow on
      step(1, 5),                                                  // line 16: goes backwards
    ];
    const r = await importText('log.jsonl', jsonl(lines), '--skip-bad');
    try {
      expect(r.code).toBe(0);
      const f = r.input;
      const listed = r.err.split('\n').filter((l) => l.startsWith('  '));
      expect(listed.map((l) => l.replace(f, 'LOG'))).toEqual([
        '  LOG line 5: q has 1 value; expected 2 (one per action)',
        '  LOG lines 6–7: rest of episode 1 after skipped line 5 (a step file holds no gap inside an episode)',
        expect.stringMatching(/^ {2}LOG line 8: is not JSON \(.+\); expected one JSON object per line$/),
        '  LOG line 10: action 9 is not one of 0..1',
        '  LOG line 13: q "x" is not an array; expected 2 numbers',
        '  LOG lines 14–15: rest of episode 4 after skipped line 13 (a step file holds no gap inside an episode)',
        '  LOG line 16: episode 1 comes after episode 3 (line 12); episode numbers must go up (the steps of an episode are contiguous)',
      ]);
      expect(r.err).toContain('episcope import: skipped 9 of 16 lines:');
      expect(r.out).toContain('7 steps in 4 episodes');
      expect(r.out).toContain('9 skipped');
      expect(r.files).toEqual(['log.jsonl', 'out.steps']);
      const file = openStepFilePath(r.outPath);
      expect(file.header.run).toMatchObject({ lines: 16, skipped: 9 });
      expect(file.episodes.map((e) => [e.length, e.end!.outcome, e.end!.reason])).toEqual([
        [3, 'terminal', ''],
        [1, 'ended', 'cut short: line 5 and the rest of the episode were skipped on import'],
        [1, 'ended', 'cut short: line 10 and the rest of the episode were skipped on import'],
        [2, 'truncated', ''],
      ]);
      file.close();
    } finally {
      r.sub.remove();
    }
  });

  it('skips a CSV row whose quoted field runs over several lines, naming the line it starts on', async () => {
    const text = [
      'episode,step,state.0,action,reward,terminal,truncated,q.0,reason',
      '0,0,1,0,1,false,false,0.5,',
      '0,1,1,0,"not\r\na number",false,false,0.5,',
      '1,0,1,0,1,false,true,0.5,"time\r\nlimit"',
    ].join('\r\n');
    const r = await importText('log.csv', text, '--skip-bad');
    try {
      expect(r.code).toBe(0);
      // The value is shown JSON-escaped, so the report stays one line per skip.
      expect(r.err).toContain(`skipped 1 of 3 lines:\n  ${r.input} line 3: reward "not\\r\\na number" is not a number`);
      const file = openStepFilePath(r.outPath);
      expect(file.episodes.map((e) => [e.length, e.end!.outcome, e.end!.reason])).toEqual([[1, 'ended', 'cut short: line 3 and the rest of the episode were skipped on import'], [1, 'truncated', 'time\r\nlimit']]);
      file.close();
    } finally {
      r.sub.remove();
    }
  });

  it('still refuses a log none of whose lines can be imported, writing nothing', async () => {
    const r = await importText('log.jsonl', jsonl([step(0, 0, { q: 'x' }), 'nope']), '--skip-bad');
    try {
      expect(r.code).toBe(2);
      expect(r.err).toContain('none of its 2 lines could be imported');
      expect(r.files).toEqual(['log.jsonl']);
    } finally {
      r.sub.remove();
    }
  });
});

describe('the output file', () => {
  it('is never replaced without --force; with --force it is, and a failed import leaves the old one as it was', async () => {
    const sub = scratchFolder('import-out');
    try {
      const input = sub.path('log.jsonl');
      const out = sub.path('run.steps');
      writeFileSync(input, jsonl(good()));
      writeFileSync(out, 'an earlier recording');
      const refused = await runCommand(importCommand, [input, '-o', out, '--gamma', '0.9']);
      expect(refused.code).toBe(2);
      expect(refused.err).toBe(`episcope import: ${out}: already exists; refusing to overwrite a recording (pass --force to replace it)\n`);
      expect(readFileSync(out, 'utf8')).toBe('an earlier recording');

      writeFileSync(input, jsonl([...good(), step(0, 9)]));
      const failed = await runCommand(importCommand, [input, '-o', out, '--gamma', '0.9', '--force']);
      expect(failed.code).toBe(2);
      expect(readFileSync(out, 'utf8')).toBe('an earlier recording');

      writeFileSync(input, jsonl(good()));
      const forced = await runCommand(importCommand, [input, '-o', out, '--gamma', '0.9', '--force']);
      expect(forced.code).toBe(0);
      const file = openStepFilePath(out);
      expect(file.totalSteps).toBe(6);
      file.close();
      expect(sub.files()).toEqual(['log.jsonl', 'run.steps']);
      expect(existsSync(`${out}.partial-${process.pid}`)).toBe(false);
    } finally {
      sub.remove();
    }
  });

  it('refuses to write over the log itself, even with --force', async () => {
    const r = await importText('log.jsonl', jsonl(good()));
    try {
      const again = await runCommand(importCommand, [r.input, '-o', r.input, '--force']);
      expect(again.code).toBe(2);
      expect(again.err).toContain('is the log being imported');
      expect(JSON.parse(readFileSync(r.input, 'utf8').split('\n')[0])).toEqual(good()[0]);
    } finally {
      r.sub.remove();
    }
  });
});

describe('writing', () => {
  it('removes the partial file when the recording fails half way, and leaves no OUT', async () => {
    const sub = scratchFolder('import-write');
    try {
      const out = sub.path('run.steps');
      const header = { stateDims: [{ name: 'x', unit: '' }], actions: ['a0'], gamma: 0.9, system: { kind: 'imported', map: {} } };
      const failing = writeStepFile(out, false, header, { blockSize: 1 }, (recorder) => {
        recorder.step({ state: [1], action: 0, reward: 0, q: [0] });
        expect(sub.files()).toEqual([`run.steps.partial-${process.pid}`]); // the block is on disk already
        throw new Error('the disk is full');
      });
      await expect(failing).rejects.toThrow('the disk is full');
      expect(sub.files()).toEqual([]);
    } finally {
      sub.remove();
    }
  });
});

describe('usage errors', () => {
  it.each([
    [['log.jsonl'], 'episcope import: -o OUT.steps is required'],
    [['log.txt', '-o', 'x.steps'], 'cannot tell the log\'s format from its name; expected a name ending in .jsonl (JSON Lines) or .csv'],
    [['missing.jsonl', '-o', 'x.steps'], 'missing.jsonl: no such file'],
    [['log.jsonl', '-o', 'x.steps', '--gamma', '2'], 'episcope import: --gamma "2" is not a number in [0, 1]'],
    [['log.jsonl', '-o', 'x.steps', '--actions', 'left,left'], '--actions: "left" is named twice'],
    [['log.jsonl', '-o', 'x.steps', '--actions', '0,1'], '--actions: "0" is a whole number; action names must not look like indices'],
    [['log.jsonl', '-o', 'x.steps', '--units', 'm'], '--units gives 1 unit; the log\'s state has 3 dimensions'],
    [['log.jsonl', '-o', 'x.steps', '--bogus'], 'episcope import: Unknown option \'--bogus\''],
    [['log.jsonl', '-o', 'no/such/folder/x.steps'], 'x.steps: the folder '],
  ])('%j', async (argv, message) => {
    const sub = scratchFolder('import-usage');
    try {
      writeFileSync(sub.path('log.jsonl'), jsonl(good()));
      writeFileSync(sub.path('log.txt'), jsonl(good()));
      const abs = argv.map((a) => (a.includes('.') && !a.startsWith('-') && a !== '2' ? sub.path(a) : a));
      const r = await runCommand(importCommand, abs);
      expect(r.code).toBe(2);
      expect(r.err).toContain(message);
      expect(r.err.trimEnd().split('\n')).toHaveLength(1);
      expect(sub.files()).toEqual(['log.jsonl', 'log.txt']);
    } finally {
      sub.remove();
    }
  });
});

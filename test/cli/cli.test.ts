/**
 * The `episcope` command as a user runs it: the real bin script in a child process.
 */
import { execFileSync, spawnSync } from 'node:child_process';
import { mkdtempSync, readFileSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { beforeAll, describe, expect, it } from 'vitest';
import { openStepFilePath } from '../../formats/node.ts';
import { FLAG_EXPLORED, FLAG_TERMINAL } from '../../formats/types.ts';
import { recordToFile } from '../../src/record/node.ts';

const BIN = join(import.meta.dirname, '..', '..', 'bin', 'episcope.js');
const run = (...args: string[]) => spawnSync(process.execPath, [BIN, ...args], { encoding: 'utf8', env: { ...process.env, NO_COLOR: '1' } });

let dir: string;
let file: string;

beforeAll(() => {
  dir = mkdtempSync(join(tmpdir(), 'ep-cli-'));
  file = join(dir, 'small.steps');
  const rec = recordToFile(file, {
    stateDims: [{ name: 'x', unit: 'm' }, { name: 'v', unit: 'm/s' }],
    actions: ['left', 'right'],
    gamma: 0.9,
    system: { kind: 'test-rig', map: { position: 0 } },
    run: { purpose: 'cli test' },
  }, { blockSize: 4 });
  rec.snapshot({ role: 'target', trainingStep: 0, layers: [{ inputs: 2, outputs: 2, activation: 'linear', weights: new Float32Array([1, 0, 0, 1]), bias: new Float32Array(2) }] });
  // Episode 0: greedy flips at steps 2 and 4; a NaN Q at step 3; explored at step 1; terminal at 5.
  const qs = [[1, 0], [2, 1], [0, 1], [NaN, 1], [3, 1], [3, 1]];
  qs.forEach((q, t) => rec.step({ state: [t * 0.5, -t], action: t % 2, reward: t === 5 ? -1 : 0.25, q, explored: t === 1, terminal: t === 5 }));
  rec.endEpisode({ failed: true, reason: 'fell over' });
  for (let t = 0; t < 3; t++) rec.step({ state: [t, t], action: 0, reward: 1, q: [Infinity, 0], truncated: t === 2 });
  rec.endEpisode({ mode: 'eval' });
  rec.close();
});

describe('episcope summary', () => {
  it('prints one row per episode with outcome, Q range, non-finite count and flips', () => {
    const r = run('summary', file);
    expect(r.status).toBe(0);
    expect(r.stdout).toContain('test-rig');
    const rows = r.stdout.split('\n').filter((l) => /^\s+\d+\s/.test(l));
    expect(rows).toHaveLength(2);
    // episode 0: 6 steps, return 0.25·5 − 1 = 0.25, terminal (fail), finite Q in [0, 3], 1 NaN, flips at 2 and 4
    expect(rows[0].trim().split(/\s{2,}/)).toEqual(['0', 'train', '6', '0.250', 'terminal (fail)', 'fell over', '0.000', '3.000', '1', '2', '–', expect.stringMatching(/^[0-9a-f]{8}$/)]);
    expect(rows[1]).toMatch(/eval\s+3\s+3\.000\s+truncated/);
  });

  it('gives the same facts as JSON, with non-finite values named', () => {
    const r = run('summary', file, '--json');
    expect(r.status).toBe(0);
    const s = JSON.parse(r.stdout);
    expect(s.steps).toBe(9);
    expect(s.header.actions).toEqual(['left', 'right']);
    expect(s.recovery.indexed).toBe(true);
    expect(s.episodes[0]).toMatchObject({ episode: 0, steps: 6, outcome: 'terminal', failed: true, minQ: 0, maxQ: 3, nonFiniteQ: 1, firstNonFiniteStep: 3, greedyFlips: 2, exploredSteps: 1 });
    expect(s.episodes[1]).toMatchObject({ mode: 'eval', nonFiniteQ: 3, minQ: 0, maxQ: 0, greedyFlips: 0 });
  });

  it('says what it recovered from a file whose recorder never closed it', () => {
    const bytes = readFileSync(file);
    const cut = join(dir, 'cut.steps');
    // Lose the index, the trailer and the tail of the last records, as a killed recorder would.
    writeFileSync(cut, bytes.subarray(0, bytes.length - 200));
    const r = run('summary', cut);
    expect(r.status).toBe(0);
    expect(r.stdout).toMatch(/not closed properly/);
    expect(r.stdout).toMatch(/recovered \d+ whole records/);
    expect(r.stdout).toMatch(/dropped: cut-short at byte \d+/);
  });
});

describe('episcope dump', () => {
  it('prints the steps as JSON objects with the fields named as in the spec, equal to the file', () => {
    const r = run('dump', file, '--episode', '0', '--from', '1', '--to', '3', '--json');
    expect(r.status).toBe(0);
    const steps = JSON.parse(r.stdout);
    const f = openStepFilePath(file);
    const e = f.readEpisode(0);
    f.close();
    expect(steps.map((s: { step: number }) => s.step)).toEqual([1, 2, 3]);
    for (const s of steps) {
      const t = s.step;
      expect(s.state).toEqual([e.state[t * 2], e.state[t * 2 + 1]]);
      expect(s.action).toBe(e.action[t]);
      expect(s.reward).toBe(e.reward[t]);
      expect(s.explored).toBe((e.flags[t] & FLAG_EXPLORED) !== 0);
      expect(s.terminal).toBe((e.flags[t] & FLAG_TERMINAL) !== 0);
      expect(s.targetId).toBe(e.weights[0][2]);
      expect(Object.keys(s).sort()).toEqual(['action', 'episode', 'explored', 'onlineId', 'q', 'reward', 'state', 'step', 'targetId', 'terminal', 'truncated'].sort());
    }
    expect(steps[2].q).toEqual(['NaN', 1]);
  });

  it('prints a table without --json', () => {
    const r = run('dump', file, '--episode', '1');
    expect(r.status).toBe(0);
    expect(r.stdout).toMatch(/step\s+x\s+v\s+action\s+reward\s+Q left\s+Q right\s+flags/);
    expect(r.stdout).toMatch(/Infinity/);
  });
});

describe('bad usage is one line on stderr and exit code 2', () => {
  const cases: [string, string[], RegExp][] = [
    ['an unknown flag', ['summary', 'FILE', '--colour'], /Unknown option '--colour'/],
    ['a missing file', ['summary', '/no/such/file.steps'], /\/no\/such\/file\.steps: no such file/],
    ['a bad number', ['dump', 'FILE', '--episode', 'two'], /--episode "two" is not a whole number/],
    ['an unknown episode', ['dump', 'FILE', '--episode', '7'], /no episode 7/],
    ['a missing --episode', ['dump', 'FILE'], /--episode E is required/],
    ['an unknown command', ['replay', 'FILE'], /unknown command "replay"/],
    ['a file that is not a step file', ['summary', 'PKG'], /does not start with the step-file signature/],
    ['an unknown sample', ['demo', '--only', 'nothing', '--out', 'TMP'], /--only "nothing" is not a sample/],
  ];
  it.each(cases)('%s', (_what, args, message) => {
    const r = run(...args.map((a) => (a === 'FILE' ? file : a === 'PKG' ? join(import.meta.dirname, '..', '..', 'package.json') : a === 'TMP' ? dir : a)));
    expect(r.status).toBe(2);
    expect(r.stdout).toBe('');
    expect(r.stderr.trimEnd().split('\n')).toHaveLength(1);
    expect(r.stderr).toMatch(message);
  });
});

describe('episcope demo --quick (a short real training run through the real CLI)', () => {
  it('trains, records and writes a sample that summary can read', () => {
    const out = mkdtempSync(join(tmpdir(), 'ep-demo-'));
    execFileSync(process.execPath, [BIN, 'demo', '--quick', '--only', 'trolley', '--out', out], { encoding: 'utf8', stdio: 'pipe' });
    const s = JSON.parse(execFileSync(process.execPath, [BIN, 'summary', join(out, 'trolley.steps'), '--json'], { encoding: 'utf8' }));
    expect(s.recovery.indexed).toBe(true);
    expect(s.header.system.kind).toBe('cart-pole');
    expect(s.header.run.sample).toBe('trolley');
    expect(s.steps).toBeGreaterThan(1500);
    expect(s.episodes.some((e: { mode: string }) => e.mode === 'eval')).toBe(true);
    expect(s.snapshots.some((x: { role: string }) => x.role === 'target')).toBe(true);
    expect(s.snapshots.some((x: { role: string }) => x.role === 'online')).toBe(true);
  }, 120_000);
});

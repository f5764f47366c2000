/**
 * `episcope td`, `suspects` and `health` as a user runs them, checked against values computed
 * here from the raw columns and a plain matrix-multiply forward pass.
 */
import { spawnSync } from 'node:child_process';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { openStepFilePath } from '../../formats/node.ts';
import type { DenseLayer } from '../../formats/types.ts';

const ROOT = join(import.meta.dirname, '..', '..');
const BIN = join(ROOT, 'bin', 'episcope.js');
const TROLLEY = join(ROOT, 'samples', 'trolley.steps');
const FAST = join(ROOT, 'samples', 'trolley-fast-sync.steps');
/** Episodes of the trolley sample found from its own records, never numbers copied from output. */
const trolley = (() => {
  const f = openStepFilePath(TROLLEY);
  const evals = f.episodes.filter((e) => e.end?.mode === 'eval');
  const out = {
    count: f.episodes.length,
    failingEval: evals.find((e) => e.end!.failed && e.end!.outcome === 'terminal')!.episode,
    truncatedEval: evals.find((e) => e.end!.outcome === 'truncated')!.episode,
  };
  f.close();
  return out;
})();
const run = (...args: string[]) => spawnSync(process.execPath, [BIN, ...args], { encoding: 'utf8', env: { ...process.env, NO_COLOR: '1' } });

/** y = x·W + b through each layer; relu or linear, as the samples use. */
function forward(layers: DenseLayer[], x: ArrayLike<number>): number[] {
  let v = Array.from(x);
  for (const l of layers) {
    const out: number[] = [];
    for (let j = 0; j < l.outputs; j++) {
      let s = l.bias[j];
      for (let i = 0; i < l.inputs; i++) s += v[i] * l.weights[i * l.outputs + j];
      out.push(l.activation === 'relu' ? Math.max(0, s) : s);
    }
    v = out;
  }
  return v;
}

describe('episcope td', () => {
  it('gives each step the DQN target r + γ·max Q_target(s′) and δ = y − Q(s, a), computed independently', () => {
    const r = run('td', TROLLEY, '--target', `${TROLLEY}#target`, '--episode', String(trolley.failingEval), '--json');
    expect(r.status).toBe(0);
    const doc = JSON.parse(r.stdout);
    expect(doc.signConvention).toMatch(/δ = y − Q\(s, a\)/);
    const file = openStepFilePath(TROLLEY);
    const lastTarget = [...file.snapshots].reverse().find((s) => s.role === 'target')!;
    expect(doc.target.id).toBe(lastTarget.id);
    const layers = file.readSnapshot(lastTarget).layers;
    const e = file.readEpisode(trolley.failingEval);
    file.close();
    const steps = doc.episodes[0].steps;
    expect(steps).toHaveLength(e.n);
    for (const t of [0, 1, 50, e.n - 2, e.n - 1]) {
      const next = t + 1 < e.n ? e.state.subarray((t + 1) * 4, (t + 2) * 4) : e.end!.finalState!;
      const terminal = (e.flags[t] & 1) !== 0;
      const y = e.reward[t] + (terminal ? 0 : 0.99 * Math.max(...forward(layers, next)));
      const q = e.q[t * 2 + e.action[t]];
      expect(steps[t].step).toBe(t);
      expect(steps[t].bootstrapped).toBe(!terminal);
      expect(steps[t].target).toBeCloseTo(y, 4);
      expect(steps[t].q).toBeCloseTo(q, 6);
      expect(steps[t].delta).toBeCloseTo(y - q, 4);
      expect(steps[t].clipped).toBe(Math.abs(y - q) > 1);
    }
    // The failing last step is terminal: y = r, nothing bootstraps.
    expect(steps[e.n - 1]).toMatchObject({ bootstrapped: false, discount: 0 });
  });

  it('summarises every episode when no --episode is given', () => {
    const r = run('td', TROLLEY, '--target', '#target', '--rule', 'double', '--json');
    expect(r.status).toBe(0);
    const doc = JSON.parse(r.stdout);
    expect(doc.rule).toBe('double');
    expect(doc.episodes).toHaveLength(trolley.count);
    expect(doc.episodes[0]).toHaveProperty('meanAbsDelta');
  });

  it('shows how much treating truncation as terminal changes a time-limited episode', () => {
    const a = JSON.parse(run('td', TROLLEY, '--target', '#target', '--episode', String(trolley.truncatedEval), '--json').stdout);
    const b = JSON.parse(run('td', TROLLEY, '--target', '#target', '--episode', String(trolley.truncatedEval), '--truncation', 'terminal', '--json').stdout);
    const last = a.episodes[0].steps.length - 1;
    expect(a.episodes[0].steps[last].bootstrapped).toBe(true);
    expect(b.episodes[0].steps[last].bootstrapped).toBe(false);
    expect(b.episodes[0].steps[last].target).toBeCloseTo(b.episodes[0].steps[last].reward, 6);
    expect(a.episodes[0].steps[last - 1].target).toBeCloseTo(b.episodes[0].steps[last - 1].target, 9);
  });

  it('prints an aligned table with the sign convention stated', () => {
    const r = run('td', TROLLEY, '--target', '#target', '--episode', '0');
    expect(r.status).toBe(0);
    expect(r.stdout).toMatch(/sign\s+δ = y − Q\(s, a\)/);
    expect(r.stdout).toMatch(/step\s+action\s+r\s+discount\s+bootstrap\s+y\s+Q\(s,a\)\s+δ/);
  });

  const bad: [string, string[], RegExp][] = [
    ['no --target', ['td', TROLLEY], /--target SNAP is required/],
    ['an unknown rule', ['td', TROLLEY, '--target', '#target', '--rule', 'sarsa'], /--rule "sarsa" is not one of dqn, double, nstep/],
    ['--n without nstep', ['td', TROLLEY, '--target', '#target', '--n', '3'], /--n only applies to --rule nstep/],
    ['a γ above 1', ['td', TROLLEY, '--target', '#target', '--gamma', '1.5'], /--gamma "1.5" is not a number in \[0, 1\]/],
    ['a bad truncation', ['td', TROLLEY, '--target', '#target', '--truncation', 'maybe'], /--truncation "maybe"/],
    ['a snapshot of the wrong size', ['td', TROLLEY, '--target', join(ROOT, 'samples', 'rover.steps')], /2 inputs.*4 dimensions|4 dimensions.*2 inputs/],
    ['an unknown episode', ['td', TROLLEY, '--target', '#target', '--episode', '9999'], /no episode 9999/],
  ];
  it.each(bad)('refuses %s with one line on stderr and exit code 2', (_w, args, message) => {
    const r = run(...args);
    expect(r.status).toBe(2);
    expect(r.stderr.trimEnd().split('\n')).toHaveLength(1);
    expect(r.stderr).toMatch(message);
  });
});

describe('episcope suspects', () => {
  it('ranks the blow-up of the fast-sync run first and points at a step beyond the bound', () => {
    const r = run('suspects', FAST, '--top', '5', '--json');
    expect(r.status).toBe(0);
    const doc = JSON.parse(r.stdout);
    expect(doc.suspects).toHaveLength(5);
    expect(['beyond-bound', 'non-finite']).toContain(doc.suspects[0].rule);
    const file = openStepFilePath(FAST);
    const e = file.readEpisode(doc.suspects[0].episode);
    file.close();
    const t = doc.suspects[0].step - e.step[0];
    expect(Math.max(Math.abs(e.q[t * 2]), Math.abs(e.q[t * 2 + 1]))).toBeGreaterThan(doc.bound);
  });

  it('gives every episode a verdict and its worst suspect, in a table', () => {
    const r = run('suspects', TROLLEY, '--top', '3');
    expect(r.status).toBe(0);
    expect(r.stdout).toMatch(/Suspects \(3 of \d+, most severe first\)/);
    const rows = r.stdout.split('\n').filter((l) => /^\s+\d+\s+(train|eval)\s/.test(l));
    expect(rows).toHaveLength(trolley.count);
    expect(rows.find((l) => new RegExp(`^\\s+${trolley.failingEval}\\s`).test(l))).toMatch(/fail.*overestimate-before-failure at step \d+/);
  });
});

describe('episcope health', () => {
  it('averages max Q over held-out states for every snapshot, in training order, and flags the blow-up', () => {
    const r = run('health', FAST, '--json');
    expect(r.status).toBe(0);
    const doc = JSON.parse(r.stdout);
    const file = openStepFilePath(FAST);
    expect(doc.points).toHaveLength(file.snapshots.length);
    file.close();
    const steps = doc.points.map((p: { trainingStep: number }) => p.trainingStep);
    expect(steps).toEqual([...steps].sort((a, b) => a - b));
    expect(doc.heldOut.drawnFrom).toBe('explored');
    expect(doc.points.some((p: { flag: string | null }) => p.flag && /beyond the bound|climb/.test(p.flag))).toBe(true);
    // The first snapshot (untrained weights) is not flagged.
    expect(doc.points[0].flag).toBeNull();
  });

  it('prints a table for the trolley run with no flag on the early snapshots', () => {
    const r = run('health', TROLLEY);
    expect(r.status).toBe(0);
    expect(r.stdout).toMatch(/training step\s+role\s+id\s+average max Q\s+flag/);
  });
});

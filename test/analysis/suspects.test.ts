/**
 * Suspects on the committed recordings. Every expected place is computed here from the raw
 * columns, never copied from the program's output.
 */
import { afterAll, describe, expect, it } from 'vitest';
import { openStepFilePath } from '../../formats/node.ts';
import { FLAG_TERMINAL } from '../../formats/types.ts';
import type { StepFile } from '../../formats/reader.ts';
import { analyseFile } from '../../src/analysis/analyse.ts';
import type { EpisodeSeries } from '../../src/analysis/series.ts';
import { movingMean, rankSuspects, valueBound, type Suspect } from '../../src/analysis/suspects.ts';
import { denseQ } from './dense.ts';

const samples = new URL('../../samples/', import.meta.url).pathname;
const opened: StepFile[] = [];
const open = (name: string) => {
  const file = openStepFilePath(samples + name);
  opened.push(file);
  return file;
};
afterAll(() => opened.forEach((f) => f.close()));

const isEval = (f: StepFile, episode: number) => f.episode(episode).end?.mode === 'eval';

describe('valueBound and movingMean', () => {
  it.each([
    { rMax: 1, gamma: 0.99, bound: 1 / (1 - 0.99) }, // ≈ 100: no sequence of rewards ≤ 1 is worth more (common practice)
    { rMax: 2, gamma: 0.5, bound: 4 },
    { rMax: 1, gamma: 1, bound: Infinity }, // undiscounted: no bound
  ])('r_max = $rMax, γ = $gamma → $bound', ({ rMax, gamma, bound }) => {
    expect(valueBound(rMax, gamma)).toBe(bound);
  });

  it('averages over [t − h, t + h], clipped at the ends', () => {
    expect(Array.from(movingMean(Float64Array.of(1, 2, 3, 4, 10), 1))).toEqual([1.5, 2, 3, 17 / 3, 7]);
  });
});

describe('suspects on trolley-fast-sync.steps (target synced every 4 updates)', () => {
  const file = open('trolley-fast-sync.steps');
  const A = file.header.actions.length;

  // r_max and the bound from the raw columns.
  let rMax = 0;
  for (const info of file.episodes) for (const r of file.readEpisode(info.episode).reward) if (Number.isFinite(r)) rMax = Math.max(rMax, Math.abs(r));
  const bound = rMax / (1 - file.header.gamma);

  // The first step, in file order, where some |Q| exceeds the bound.
  let first: { episode: number; step: number } | null = null;
  for (const info of file.episodes) {
    const e = file.readEpisode(info.episode);
    for (let t = 0; t < e.n && !first; t++) {
      for (let a = 0; a < A; a++) if (Math.abs(e.q[t * A + a]) > bound) first = { episode: e.episode, step: e.step[t] };
    }
    if (first) break;
  }
  const analysis = analyseFile(file);

  it('uses the same r_max and bound', () => {
    expect(first).not.toBeNull();
    expect(analysis.rMax).toBe(rMax);
    expect(analysis.bound).toBe(bound);
  });

  it('raises beyond-bound at exactly the first step where |Q| > r_max/(1−γ)', () => {
    const atFirst = analysis.suspects.filter((s) => s.rule === 'beyond-bound' && s.episode === first!.episode);
    expect(atFirst).toHaveLength(1);
    expect(atFirst[0].step).toBe(first!.step);
    expect(atFirst[0].from).toBe(first!.step);
    // Nothing earlier in the file is beyond the bound, so no beyond-bound suspect comes before it.
    expect(analysis.suspects.filter((s) => s.rule === 'beyond-bound' && s.episode < first!.episode)).toEqual([]);
  });

  it('ranks the blow-up first', () => {
    expect(['beyond-bound', 'non-finite']).toContain(analysis.suspects[0].rule);
  });
});

describe('suspects on trolley.steps', () => {
  const file = open('trolley.steps');
  const evalEpisodes = file.episodes.filter((e) => isEval(file, e.episode));
  const failing = evalEpisodes.filter((e) => e.end!.failed && e.end!.outcome === 'terminal');
  const healthy = evalEpisodes.filter((e) => !e.end!.failed);
  const analysis = analyseFile(file);
  const suspectsOf = (list: Suspect[], episode: number) => list.filter((s) => s.episode === episode);

  it('has evaluation episodes of both kinds, as the sample is described', () => {
    expect(failing.length).toBeGreaterThan(0);
    expect(healthy.length).toBeGreaterThan(0);
    // The balancing trolley fails in one of its two ways (src/envs/cartpole.ts).
    for (const e of failing) expect(['mast fell', 'trolley left the rail']).toContain(e.end!.reason);
    for (const e of healthy) expect(e.end!.outcome).toBe('truncated');
  });

  it('points, in every failing evaluation episode, at a step before the failure', () => {
    for (const info of failing) {
      const steps = file.readEpisode(info.episode).step;
      const lastStep = steps[steps.length - 1];
      const early = suspectsOf(analysis.suspects, info.episode).filter((s) => s.step < lastStep);
      expect(early.length, `episode ${info.episode} (fails at step ${lastStep})`).toBeGreaterThan(0);
    }
  });

  it('raises nothing high in a healthy evaluation episode', () => {
    for (const info of healthy) {
      expect(suspectsOf(analysis.suspects, info.episode).filter((s) => s.level === 'high'), `episode ${info.episode}`).toEqual([]);
    }
  });

  describe('with the target network in force at the first evaluation round', () => {
    const firstEval = evalEpisodes[0];
    const [, onlineId, targetId] = file.readEpisode(firstEval.episode).weights[0];
    const targetRef = file.snapshots.find((s) => s.id === targetId && s.role === 'target')!;
    const target = denseQ(file.readSnapshot(targetRef).layers);

    it('has a plain forward pass that reproduces the recorded Q from the online snapshot', () => {
      // Trust in the hand-written pass: the online weights of the same round give back what the recorder wrote.
      const e = file.readEpisode(firstEval.episode);
      const q = denseQ(file.readSnapshot(file.snapshotById(onlineId)!).layers)(e.state, e.n);
      let worst = 0;
      for (let i = 0; i < q.length; i++) worst = Math.max(worst, Math.abs(q[i] - e.q[i]));
      expect(worst).toBeLessThan(1e-5); // float32 sums in a different order
    });

    const run = () => {
      const series = new Map<number, EpisodeSeries>();
      const result = analyseFile(file, { target }, (s) => {
        if (failing.some((e) => e.episode === s.episode)) series.set(s.episode, s);
      });
      return { result, series };
    };
    const first = run();

    it('stops bootstrapping exactly at the terminal step of each failing evaluation episode', () => {
      for (const info of failing) {
        const e = file.readEpisode(info.episode);
        const td = first.series.get(info.episode)!.td!;
        const expected = Array.from(e.flags, (f) => (f & FLAG_TERMINAL ? 0 : 1));
        expect(expected[e.n - 1]).toBe(0); // the failure is the terminal step
        expect(Array.from(td.bootstrapped), `episode ${info.episode}`).toEqual(expected);
        expect(td.target[e.n - 1]).toBe(e.reward[e.n - 1]); // y = r at a terminal step (Mnih et al. 2015, Algorithm 1)
      }
    });

    it('gives the same suspects on a second run', () => {
      const second = run();
      expect(second.result.suspects).toEqual(first.result.suspects);
      expect(second.result.tdRule).toBe('dqn');
    });
  });
});

describe('rankSuspects', () => {
  const suspect = (rule: Suspect['rule'], severity: number, episode: number, step: number): Suspect => ({
    rule,
    severity,
    level: severity >= 70 ? 'high' : severity >= 40 ? 'medium' : 'low',
    episode,
    from: step,
    to: step,
    step,
    reason: '',
    numbers: {},
  });

  it('orders by severity (highest first), then episode, then step, then rule name', () => {
    const ranked = [
      suspect('non-finite', 100, 5, 9),
      suspect('beyond-bound', 80, 2, 4),
      suspect('beyond-bound', 80, 3, 1),
      suspect('overestimate-before-failure', 80, 3, 2),
      suspect('beyond-bound', 80, 3, 7),
      suspect('td-spike', 80, 3, 7),
      suspect('flip-burst-before-failure', 20, 0, 0),
    ];
    const shuffled = [ranked[4], ranked[6], ranked[1], ranked[5], ranked[0], ranked[3], ranked[2]];
    expect(rankSuspects(shuffled)).toEqual(ranked);
    expect(rankSuspects([...ranked].reverse())).toEqual(ranked);
  });

  it('leaves its input as it was', () => {
    const list = [suspect('td-spike', 10, 0, 0), suspect('non-finite', 100, 0, 0)];
    rankSuspects(list);
    expect(list.map((s) => s.rule)).toEqual(['td-spike', 'non-finite']);
  });
});

import * as tf from '@tensorflow/tfjs';
import { beforeAll, describe, expect, it } from 'vitest';
import type { DqnSettings } from '../../src/agent/settings.ts';
import { linearEpsilon, trainDqn, type ProgressInfo } from '../../src/agent/trainer.ts';
import { useTestBackend } from './backend.ts';
import { DriftSystem, MemoryRecorder, OneStateSystem, forwardDense } from './helpers.ts';

beforeAll(async () => {
  await useTestBackend();
});

/** Small, fast settings; each test overrides what it is about. */
const quick: Partial<DqnSettings> = {
  seed: 3, hiddenLayers: [16], learningRate: 0.01, batchSize: 16, replayStart: 16, replayCapacity: 1000,
  targetSync: 10, evalEvery: 0, gradientClipNorm: null, heldOutStates: 10,
};

describe('linearEpsilon', () => {
  it('falls linearly from start to end over the decay steps, then stays — Mnih et al. 2015, Extended Data Table 1 (linear annealing)', () => {
    expect(linearEpsilon(0, 1, 0.1, 100)).toBe(1);
    expect(linearEpsilon(50, 1, 0.1, 100)).toBeCloseTo(0.55, 12);
    expect(linearEpsilon(100, 1, 0.1, 100)).toBe(0.1);
    expect(linearEpsilon(5000, 1, 0.1, 100)).toBe(0.1);
    expect(linearEpsilon(0, 1, 0.1, 0)).toBe(0.1);
  });
});

describe('trainDqn on problems with a known answer', () => {
  it('one state, one action, reward 1, cut only by the time limit: Q → r/(1−γ) = 10 at γ = 0.9 (Bellman fixed point; bootstrapping through truncation, Pardo et al. 2018)', async () => {
    // Episodes are only 5 steps long, so if truncated steps were wrongly stored as terminal, one target
    // in five would be r = 1 and the fit would settle near 7.5 (Huber's bounded pull from those
    // targets, Huber 1964) — far outside the 2 % tolerance.
    for (const rule of ['dqn', 'double'] as const) {
      const summary = await trainDqn(new OneStateSystem([1], 5), {
        ...quick, rule, gamma: 0.9, totalSteps: 1000, epsilonStart: 0, epsilonEnd: 0, epsilonDecaySteps: 0,
      });
      expect(summary.updates).toBeLessThanOrEqual(1000);
      const [q] = forwardDense(summary.finalOnline, [1]);
      expect(Math.abs(q - 10) / 10).toBeLessThan(0.02);
      expect(summary.finalAverageMaxQ).toBeCloseTo(q, 4);
    }
  });

  it('a two-action bandit (every episode one terminal step, rewards 0 and 1): Q → [0, 1] and the greedy action is the better one', async () => {
    const recorder = new MemoryRecorder();
    const summary = await trainDqn(new OneStateSystem([0, 1], 1, true), {
      ...quick, gamma: 0.9, totalSteps: 400, epsilonStart: 1, epsilonEnd: 1, epsilonDecaySteps: 0,
      evalEvery: 400, evalEpisodes: 3,
    }, { recorder });
    const q = forwardDense(summary.finalOnline, [1]);
    expect(q[0]).toBeCloseTo(0, 1);
    expect(q[1]).toBeCloseTo(1, 1);
    // Greedy evaluation must always pick action 1 and so earn 1 per episode.
    expect(summary.evalReturns).toEqual([1, 1, 1]);
    const evalSteps = recorder.steps.filter((_, i) => i >= summary.steps);
    expect(evalSteps.map((st) => [st.action, st.explored])).toEqual([[1, false], [1, false], [1, false]]);
  });

  it('two actions that both bootstrap (rewards 0.5 and 1, γ = 0.9): Q* = [9.5, 10], greedy = 1 (max in the DQN target, Mnih et al. 2015)', async () => {
    // Q*(s, a) = r_a + γ max_b Q*(s, b); the best action is worth 1/(1−γ) = 10, the other 0.5 + 0.9·10 = 9.5.
    const summary = await trainDqn(new OneStateSystem([0.5, 1], 20), {
      ...quick, rule: 'dqn', gamma: 0.9, totalSteps: 1500, epsilonStart: 1, epsilonEnd: 1, epsilonDecaySteps: 0,
    });
    const q = forwardDense(summary.finalOnline, [1]);
    expect(Math.abs(q[1] - 10)).toBeLessThan(0.5);
    expect(Math.abs(q[0] - 9.5)).toBeLessThan(0.5);
    expect(q[1]).toBeGreaterThan(q[0]);
  });
});

describe('trainDqn records what a debugger needs', () => {
  const driftSettings: Partial<DqnSettings> = {
    ...quick, gamma: 0.95, totalSteps: 600, epsilonStart: 1, epsilonEnd: 0.1, epsilonDecaySteps: 400,
    evalEvery: 250, evalEpisodes: 2, targetSync: 20, gradientClipNorm: 5,
  };

  it('every step, every episode end with its mode, and snapshots at the start and at every sync', async () => {
    const recorder = new MemoryRecorder();
    const summary = await trainDqn(new DriftSystem(5), { ...driftSettings, rule: 'double' }, { recorder });

    expect(recorder.steps.length).toBe(summary.steps + summary.evalSteps);
    expect(summary.steps).toBe(600);
    expect(recorder.ends.length).toBe(summary.episodes);
    const train = recorder.ends.filter((e) => e.mode === 'train');
    const evals = recorder.ends.filter((e) => e.mode === 'eval');
    expect(train.reduce((n, e) => n + e.length, 0)).toBe(summary.steps);
    expect(evals.reduce((n, e) => n + e.length, 0)).toBe(summary.evalSteps);
    // Rounds after the episode ends past 250 and 500, and one on the final weights.
    expect(summary.evalRounds.length).toBe(3);
    expect(evals.length).toBe(6);

    // Outcomes follow the control system's flags; only the last training episode may be cut short.
    for (const end of recorder.ends.slice(0, -evals.length)) expect(['terminal', 'truncated', 'ended']).toContain(end.outcome);
    expect(recorder.ends.filter((e) => e.outcome === 'ended').length).toBeLessThanOrEqual(1);
    for (const end of recorder.ends) {
      if (end.outcome === 'terminal') expect(end.failed).toBe(true);
      if (end.outcome === 'truncated') expect(end.length).toBe(50);
      expect(end.finalQ).toHaveLength(2);
    }

    // Eval steps are greedy (evalEpsilon 0); training steps carry the linear ε schedule.
    let trainIndex = 0;
    for (const st of recorder.steps) {
      const mode = recorder.ends[st.episode].mode;
      if (mode === 'eval') {
        expect(st.explored).toBe(false);
        expect(st.epsilon).toBe(0);
      } else {
        expect(st.epsilon).toBeCloseTo(linearEpsilon(trainIndex++, 1, 0.1, 400), 12);
      }
    }

    // Snapshots: target + online at the start, the pair at every sync, and online before each eval round.
    const sizes = recorder.snapshots;
    expect(sizes.slice(0, 2).map((x) => [x.role, x.trainingStep])).toEqual([['target', 0], ['online', 0]]);
    expect(summary.syncs).toBe(Math.floor(summary.updates / 20));
    expect(summary.snapshots).toBe(2 + 2 * summary.syncs + summary.evalRounds.length);
    expect(recorder.snapshots.length).toBe(summary.snapshots);
    const syncPairs = recorder.snapshots.slice(2).filter((x) => x.role === 'target');
    expect(syncPairs.map((x) => x.trainingStep)).toEqual(Array.from({ length: summary.syncs }, (_, k) => 20 * (k + 1)));
    for (const t of syncPairs) {
      const twin = recorder.snapshots[recorder.snapshots.indexOf(t) + 1];
      expect(twin.role).toBe('online');
      expect(twin.layers).toEqual(t.layers);
    }

    // The recorded q is Q_online(state, ·) with the weights in force: at the first step, the initial
    // online snapshot; during an eval round, the online snapshot written just before it.
    const first = recorder.steps[0];
    const expected0 = forwardDense(recorder.snapshots[1].layers, first.state);
    expect(first.q[0]).toBeCloseTo(expected0[0], 5);
    expect(first.q[1]).toBeCloseTo(expected0[1], 5);
    const evalSnapshots = recorder.snapshots.filter((x, i) => x.role === 'online' && recorder.snapshots[i - 1]?.role !== 'target' && i > 1);
    expect(evalSnapshots.length).toBe(3);
    for (const snap of evalSnapshots) {
      const st = recorder.steps[snap.afterSteps];
      expect(recorder.ends[st.episode].mode).toBe('eval');
      const expected = forwardDense(snap.layers, st.state);
      expect(st.q[0]).toBeCloseTo(expected[0], 4);
      expect(st.q[1]).toBeCloseTo(expected[1], 4);
    }
  });

  it('writes sync snapshots only every snapshotEverySyncs-th sync', async () => {
    const recorder = new MemoryRecorder();
    const summary = await trainDqn(new DriftSystem(5), { ...driftSettings, evalEvery: 0, snapshotEverySyncs: 3 }, { recorder });
    expect(summary.syncs).toBeGreaterThan(6);
    const stored = recorder.snapshots.filter((x) => x.store !== false);
    expect(stored.length).toBe(2 + 2 * Math.floor(summary.syncs / 3));
    expect(stored.filter((x) => x.role === 'target').map((x) => x.trainingStep).slice(1, 3)).toEqual([60, 120]);
    // The syncs in between still name the new target weights in force, without storing them.
    const named = recorder.snapshots.filter((x) => x.role === 'target' && x.store === false);
    expect(named.length).toBe(summary.syncs - Math.floor(summary.syncs / 3));
  });

  it('repeats itself exactly for the same seed, and not for another', async () => {
    const run = async (seed: number): Promise<MemoryRecorder> => {
      const recorder = new MemoryRecorder();
      await trainDqn(new DriftSystem(9), { ...driftSettings, seed, totalSteps: 300, evalEvery: 150 }, { recorder });
      return recorder;
    };
    const a = await run(21);
    const b = await run(21);
    const c = await run(22);
    expect(b.steps.map((st) => st.action)).toEqual(a.steps.map((st) => st.action));
    expect(b.steps.map((st) => st.q)).toEqual(a.steps.map((st) => st.q));
    expect(b.snapshots.map((x) => x.layers)).toEqual(a.snapshots.map((x) => x.layers));
    expect(c.steps.map((st) => st.action)).not.toEqual(a.steps.map((st) => st.action));
  });

  it('does not grow the number of live tensors over a run, and frees everything at the end', async () => {
    const before = tf.memory().numTensors;
    const progress: ProgressInfo[] = [];
    await trainDqn(new DriftSystem(2), { ...driftSettings, totalSteps: 800 }, { onProgress: (info) => progress.push(info) });
    // Adam creates its moment estimates at the first update; from then on the count must be flat.
    const learning = progress.filter((p) => p.updates > 0);
    expect(learning.length).toBeGreaterThan(10);
    expect(new Set(learning.map((p) => p.liveTensors)).size).toBe(1);
    expect(tf.memory().numTensors).toBe(before);
  });

  it('stops on an abort signal, closing the open episode as ended', async () => {
    const recorder = new MemoryRecorder();
    const controller = new AbortController();
    const summary = await trainDqn(new DriftSystem(4), { ...driftSettings, totalSteps: 100_000 }, {
      recorder,
      onProgress: (info) => { if (info.step > 200) controller.abort(); },
      signal: controller.signal,
    });
    expect(summary.aborted).toBe(true);
    expect(summary.steps).toBeLessThan(400);
    expect(recorder.ends.at(-1)?.mode).toBe('train');
  });

  it('reports progress with losses and the held-out max-Q', async () => {
    const progress: ProgressInfo[] = [];
    const summary = await trainDqn(new DriftSystem(2), { ...driftSettings, totalSteps: 300, evalEvery: 0 }, { onProgress: (p) => progress.push(p) });
    expect(progress.length).toBe(summary.episodes);
    const last = progress.at(-1)!;
    expect(last.step).toBe(300);
    expect(Number.isFinite(last.meanLoss)).toBe(true);
    expect(Number.isFinite(last.averageMaxQ)).toBe(true);
    expect(summary.backend).toMatch(/^(wasm|cpu)$/);
    expect(summary.trainingReturns.length).toBeGreaterThan(0);
  });
});

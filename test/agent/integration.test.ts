/**
 * The trainer against the real pieces around it: the cart-pole control system of src/envs and the
 * step-file recorder of src/record, read back through the format's reader. A contract check, not a
 * learning check: a short run must produce a whole, readable step file.
 */
import { beforeAll, describe, expect, it } from 'vitest';
import { bytesSource, openStepFile } from '../../formats/index.ts';
import { trainDqn } from '../../src/agent/trainer.ts';
import { CartPole } from '../../src/envs/cartpole.ts';
import { MemorySink, createRecorder } from '../../src/record/index.ts';
import { useTestBackend } from './backend.ts';

beforeAll(async () => {
  await useTestBackend();
});

describe('trainDqn with cart-pole and the step-file recorder', () => {
  it('writes every step, episode end and snapshot into a file the reader opens whole', async () => {
    const system = new CartPole({ seed: 7, timeLimit: 200 });
    const gamma = 0.99;
    const sink = new MemorySink();
    const recorder = createRecorder(sink, {
      stateDims: system.stateDims.map((d) => ({ ...d })),
      actions: [...system.actions],
      gamma,
      system: { ...system.description },
    });
    const summary = await trainDqn(system, {
      seed: 5, gamma, totalSteps: 1200, replayStart: 200, batchSize: 32, trainEvery: 2, targetSync: 100,
      epsilonDecaySteps: 1000, evalEvery: 600, evalEpisodes: 1, hiddenLayers: [32, 32],
    }, { recorder });
    recorder.close();

    expect(recorder.stats.steps).toBe(summary.steps + summary.evalSteps);
    expect(recorder.stats.episodes).toBe(summary.episodes);
    expect(recorder.stats.snapshots).toBe(summary.snapshots);
    expect(recorder.stats.nonFiniteQ).toBe(0);

    const file = openStepFile(bytesSource(sink.bytes()), 'cart-pole.steps');
    expect(file.damaged).toBe(false);
    expect(file.totalSteps).toBe(summary.steps + summary.evalSteps);
    expect(file.episodes.length).toBe(summary.episodes);
    expect(file.snapshots.length).toBe(summary.snapshots);
    const modes = file.episodes.map((e) => e.end?.mode);
    expect(modes.filter((m) => m === 'eval').length).toBe(summary.evalRounds.length);
    expect(modes.filter((m) => m === 'train').length).toBe(summary.episodes - summary.evalRounds.length);
  });
});

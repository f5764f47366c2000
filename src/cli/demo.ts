/**
 * `episcope demo`: trains real deep Q-learning agents and writes the sample recordings. Each run is
 * a row of DEMO_RUNS: a control system of our demo scenario, the trainer's settings, a seed, and
 * what the recording is meant to show. Files are written under a temporary name and renamed when
 * whole, so an interrupted demo never leaves a half sample in place of a good one.
 */
import { mkdirSync, renameSync, rmSync } from 'node:fs';
import { join } from 'node:path';
import { initBackend, trainDqn, type DqnSettings, type ProgressInfo } from '../agent/index.ts';
import { createControlSystem, type ControlSystemKind } from '../envs/index.ts';
import { recordToFile } from '../record/node.ts';
import { UsageError, parse } from './args.ts';
import type { CommandIO } from './io.ts';

export interface DemoRun {
  name: string;
  purpose: string;
  system: ControlSystemKind;
  systemSeed: number;
  settings: Partial<DqnSettings>;
}

export const DEMO_RUNS: readonly DemoRun[] = [
  {
    name: 'trolley',
    purpose: 'balancing trolley, trained briefly: several greedy evaluation episodes still drop the mast',
    system: 'cart-pole',
    systemSeed: 11,
    settings: {
      seed: 11,
      hiddenLayers: [32, 32],
      totalSteps: 24_000,
      targetSync: 400,
      epsilonDecaySteps: 10_000,
      evalEvery: 6_000,
      evalEpisodes: 4,
    },
  },
  {
    name: 'trolley-fast-sync',
    purpose: 'balancing trolley with the target synced every 4 updates (100 times too often) and a large step size: the values blow up',
    system: 'cart-pole',
    systemSeed: 12,
    settings: {
      seed: 12,
      hiddenLayers: [32, 32],
      totalSteps: 12_000,
      targetSync: 4,
      snapshotEverySyncs: 125,
      learningRate: 0.01,
      gamma: 0.999,
      huberDelta: 1_000,
      gradientClipNorm: null,
      epsilonDecaySteps: 6_000,
      evalEvery: 4_000,
      evalEpisodes: 2,
    },
  },
  {
    name: 'rover',
    purpose: 'crater rover whose ε-greedy exploration never once reaches the rim: every episode ends at the time limit and Q only learns the battery drain',
    system: 'mountain-car',
    systemSeed: 21,
    settings: {
      seed: 21,
      hiddenLayers: [32, 32],
      totalSteps: 30_000,
      targetSync: 500,
      epsilonDecaySteps: 20_000,
      evalEvery: 10_000,
      evalEpisodes: 3,
    },
  },
];

import { demoUsage } from './usage.ts';
export { demoUsage };

/** A short run of every sample's recipe, for smoke tests: the same code path, a few seconds each. */
const QUICK: Partial<DqnSettings> = { totalSteps: 1_500, replayStart: 300, evalEvery: 700, evalEpisodes: 1, epsilonDecaySteps: 1_000 };

export async function demoCommand(argv: string[], io: CommandIO): Promise<void> {
  const { values } = parse(
    'demo',
    argv,
    { out: { type: 'string' }, only: { type: 'string' }, quick: { type: 'boolean' } },
    { min: 0, max: 0, names: '' },
  );
  const out = String(values.out ?? 'samples');
  const only = values.only === undefined ? null : String(values.only);
  const runs = DEMO_RUNS.filter((r) => only === null || r.name === only);
  if (runs.length === 0) throw new UsageError(`episcope demo: --only "${only}" is not a sample (samples: ${DEMO_RUNS.map((r) => r.name).join(', ')})`);
  mkdirSync(out, { recursive: true });
  const backend = await initBackend({ warn: (m) => io.err(`episcope demo: ${m}\n`) });
  io.err(`episcope demo: TensorFlow.js backend ${backend.backend}${backend.fallback ? ' (fallback: wasm could not start)' : ''}\n`);
  for (const run of runs) await runOne(run, out, values.quick === true, io);
}

async function runOne(run: DemoRun, outDir: string, quick: boolean, io: CommandIO): Promise<void> {
  const system = createControlSystem(run.system, { seed: run.systemSeed });
  const settings = quick ? { ...run.settings, ...QUICK } : run.settings;
  const path = join(outDir, `${run.name}.steps`);
  const partial = `${path}.partial`;
  rmSync(partial, { force: true });
  const recorder = recordToFile(
    partial,
    {
      stateDims: system.stateDims.map((d) => ({ name: d.name, unit: d.unit })),
      actions: [...system.actions],
      gamma: settings.gamma ?? 0.99,
      system: { kind: system.description.kind, title: system.description.title, map: system.description.map, params: system.description.params },
      run: { sample: run.name, purpose: run.purpose, systemSeed: run.systemSeed, timeLimit: system.timeLimit, quick, settings },
    },
    { compress: true },
  );
  const t0 = performance.now();
  let lastReport = 0;
  const onProgress = (p: ProgressInfo) => {
    const now = performance.now();
    if (p.kind !== 'eval' && now - lastReport < 5_000) return;
    lastReport = now;
    const what = p.kind === 'eval' ? `eval round mean return ${p.return.toFixed(2)}` : `step ${p.step}/${p.totalSteps}`;
    io.err(`  ${run.name}: ${what}, ε ${p.epsilon.toFixed(2)}, avg max Q ${p.averageMaxQ.toPrecision(4)}\n`);
  };
  let summary;
  try {
    summary = await trainDqn(system, settings, { recorder, onProgress });
    recorder.close();
  } catch (e) {
    rmSync(partial, { force: true });
    throw e;
  }
  renameSync(partial, path);
  const evalFails = summary.evalReturns.length;
  io.err(
    `episcope demo: wrote ${path}: ${summary.steps + summary.evalSteps} steps, ${summary.episodes} episodes ` +
      `(${evalFails} evaluation), ${summary.snapshots} snapshots, ${recorder.stats.bytesWritten.toLocaleString('en')} bytes, ` +
      `${((performance.now() - t0) / 1000).toFixed(1)} s, final avg max Q ${summary.finalAverageMaxQ.toPrecision(4)}\n`,
  );
}

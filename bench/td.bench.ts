/**
 * TD recomputation over 1,000,000 recorded steps (D = 4, A = 2) against a 4→64→64→2 target
 * network, with the DQN and Double rules, next to the bare batched forward pass of the same network
 * on the same states in the same run. The recording is read from a step file in memory, so the
 * figure includes reading, the forward pass, and the TD pieces: what `episcope td` does.
 *
 * The variants run in interleaved rounds, so that each meets the same stretches of load on this
 * shared machine rather than a quiet or a busy few seconds of its own; figures and ratios are of
 * each variant's fastest round, the one least disturbed.
 */
import { openStepFile } from '../formats/reader.ts';
import { bytesSource } from '../formats/source.ts';
import { episodeSeries, nextRecordedQ, nextStates } from '../src/analysis/series.ts';
import { tdSeries } from '../src/analysis/td.ts';
import { createRandom } from '../src/envs/random.ts';
import { createQEvaluator, type QEvaluator } from '../src/net/evaluator.ts';
import { createRecorder } from '../src/record/recorder.ts';
import { MemorySink } from '../src/record/memory-sink.ts';
import { bestOf, type BenchRow } from './timing.ts';
import { randomNet } from './nets.ts';

const STEPS = 1_000_000;
const EPISODE = 1_000;
const D = 4;
const A = 2;
const ROUNDS = 5;

function recording(): Uint8Array {
  const rng = createRandom(3);
  const sink = new MemorySink();
  const rec = createRecorder(sink, {
    stateDims: ['x', 'x_dot', 'theta', 'theta_dot'].map((name) => ({ name, unit: '' })),
    actions: ['push left', 'push right'],
    gamma: 0.99,
    system: { kind: 'cart-pole', map: {} },
  });
  const state = new Float32Array(D);
  const q = new Float32Array(A);
  for (let t = 0; t < STEPS; t++) {
    for (let i = 0; i < D; i++) state[i] = rng.uniform(-1, 1);
    q[0] = rng.uniform(0, 5);
    q[1] = rng.uniform(0, 5);
    const truncated = t % EPISODE === EPISODE - 1;
    rec.step({ state, q, action: q[0] > q[1] ? 0 : 1, reward: 0.1, truncated });
    if (truncated) rec.endEpisode({ finalState: state, finalQ: q });
  }
  rec.close();
  return sink.bytes();
}

interface Timed {
  /** Fastest wall time of the rounds: the run least disturbed. */
  seconds: number;
  /** Fastest CPU time of this process (user + system) over the rounds. */
  cpuSeconds: number;
  /** Wall time of every round. */
  rounds: number[];
}

/** Every variant once per round, in an order that rotates so none always runs right after another. */
function interleaved<K extends string>(variants: Record<K, () => void>, rounds: number): Record<K, Timed> {
  const names = Object.keys(variants) as K[];
  const out = {} as Record<K, Timed>;
  for (const name of names) {
    variants[name](); // warm-up: compile, and fill the wasm heap to its working size
    out[name] = { seconds: Infinity, cpuSeconds: Infinity, rounds: [] };
  }
  for (let r = 0; r < rounds; r++) {
    for (let i = 0; i < names.length; i++) {
      const name = names[(i + r) % names.length];
      const cpu0 = process.cpuUsage();
      const t0 = performance.now();
      variants[name]();
      const seconds = (performance.now() - t0) / 1000;
      const cpu = process.cpuUsage(cpu0);
      const t = out[name];
      t.rounds.push(seconds);
      t.seconds = Math.min(t.seconds, seconds);
      t.cpuSeconds = Math.min(t.cpuSeconds, (cpu.user + cpu.system) / 1e6);
    }
  }
  return out;
}

export async function tdBench(): Promise<{ rows: BenchRow[]; figures: Record<string, number> }> {
  const file = openStepFile(bytesSource(recording()), 'bench');
  const layers = randomNet(5);
  const target = await createQEvaluator(layers);
  // The same network with every activation a separate op, as every chunk ran before fusing.
  const unfused = await createQEvaluator(layers, { fuseActivations: false });
  const q = (s: Float32Array, n: number) => target.evaluate(s, n);

  // The bare forward pass: the same next states, gathered once, through the network in the same batches.
  const next = file.episodes.map((e) => nextStates(file.readEpisode(e.episode), D));
  const bare = (evaluator: QEvaluator) => () => {
    for (const s of next) evaluator.evaluate(s, s.length / D);
  };
  const td = (rule: 'dqn' | 'double') => () => {
    for (const info of file.episodes) {
      const e = file.readEpisode(info.episode);
      const targetNext = target.evaluate(nextStates(e, D), e.n);
      // As episodeSeries does without an online snapshot: the online choice from the Q recorded at s_{t+1}.
      const onlineNext = rule === 'double' ? nextRecordedQ(e, A) : null;
      tdSeries({ n: e.n, actionCount: A, reward: e.reward, flags: e.flags, q: e.q, action: e.action, targetNext, onlineNext }, { rule, gamma: 0.99, n: 1, truncation: 'bootstrap' });
    }
  };
  const t = interleaved({ bare: bare(target), bareUnfused: bare(unfused), dqn: td('dqn'), double: td('double') }, ROUNDS);
  const full = bestOf(3, () => {
    for (const info of file.episodes) episodeSeries(file.readEpisode(info.episode), file.header, { target: q, td: { rule: 'double' } });
  });
  target.dispose();
  unfused.dispose();
  const f = {
    steps: STEPS,
    rounds: ROUNDS,
    backend: target.backend === 'wasm' ? 1 : 0,
    bareForwardStepsPerSecond: STEPS / t.bare.seconds,
    bareForwardUnfusedStepsPerSecond: STEPS / t.bareUnfused.seconds,
    fusedVsUnfusedForward: t.bareUnfused.seconds / t.bare.seconds,
    tdDqnStepsPerSecond: STEPS / t.dqn.seconds,
    tdDoubleStepsPerSecond: STEPS / t.double.seconds,
    fullSeriesStepsPerSecond: STEPS / full.seconds,
    tdDqnVsBareForward: t.bare.seconds / t.dqn.seconds,
    tdDoubleVsBareForward: t.bare.seconds / t.double.seconds,
    // Per second of this process's CPU time: leaves out the time other processes held the core
    // (though not what they did to its caches), to tell load from a slower program.
    tdDqnStepsPerCpuSecond: STEPS / t.dqn.cpuSeconds,
    tdDqnSlowestRoundStepsPerSecond: STEPS / Math.max(...t.dqn.rounds),
  };
  const rows: BenchRow[] = [
    { what: `bare forward pass (${target.backend})`, value: f.bareForwardStepsPerSecond, unit: 'steps/s' },
    { what: '  every activation a separate op', value: f.bareForwardUnfusedStepsPerSecond, unit: 'steps/s' },
    { what: '  fused / separate', value: f.fusedVsUnfusedForward, unit: '×' },
    { what: 'TD recomputation, dqn rule (read + forward + TD)', value: f.tdDqnStepsPerSecond, unit: 'steps/s', target: '≥ 1,000,000', ok: f.tdDqnStepsPerSecond >= 1e6 },
    { what: '  dqn / bare forward', value: f.tdDqnVsBareForward, unit: '×', target: '≥ 0.5', ok: f.tdDqnVsBareForward >= 0.5 },
    { what: `  dqn, slowest of ${ROUNDS} rounds`, value: f.tdDqnSlowestRoundStepsPerSecond, unit: 'steps/s' },
    { what: '  dqn, per second of CPU time', value: f.tdDqnStepsPerCpuSecond, unit: 'steps/s' },
    { what: 'TD recomputation, double rule', value: f.tdDoubleStepsPerSecond, unit: 'steps/s', target: '≥ 1,000,000', ok: f.tdDoubleStepsPerSecond >= 1e6 },
    { what: '  double / bare forward', value: f.tdDoubleVsBareForward, unit: '×', target: '≥ 0.5', ok: f.tdDoubleVsBareForward >= 0.5 },
    { what: 'every per-step series (greedy, gap, returns, TD)', value: f.fullSeriesStepsPerSecond, unit: 'steps/s' },
  ];
  return { rows, figures: f };
}

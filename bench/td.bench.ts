/**
 * TD recomputation over 1,000,000 recorded steps (D = 4, A = 2) against a 4→64→64→2 target
 * network, with the DQN and Double rules, next to the bare batched forward pass of the same network
 * on the same states in the same run. The recording is read from a step file in memory, so the
 * figure includes reading, the forward pass, and the TD pieces: what `episcope td` does.
 */
import { openStepFile } from '../formats/reader.ts';
import { bytesSource } from '../formats/source.ts';
import { episodeSeries } from '../src/analysis/series.ts';
import { nextStates } from '../src/analysis/series.ts';
import { tdSeries } from '../src/analysis/td.ts';
import { createRandom } from '../src/envs/random.ts';
import { createQEvaluator } from '../src/net/evaluator.ts';
import { createRecorder } from '../src/record/recorder.ts';
import { MemorySink } from '../src/record/memory-sink.ts';
import { bestOf, type BenchRow } from './timing.ts';
import { randomNet } from './nets.ts';

const STEPS = 1_000_000;
const EPISODE = 1_000;
const D = 4;
const A = 2;

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

export async function tdBench(): Promise<{ rows: BenchRow[]; figures: Record<string, number> }> {
  const file = openStepFile(bytesSource(recording()), 'bench');
  const layers = randomNet(5);
  const target = await createQEvaluator(layers);
  const q = (s: Float32Array, n: number) => target.evaluate(s, n);

  // The bare forward pass: the same next states, gathered once, through the network in the same batches.
  const episodes = file.episodes.map((e) => file.readEpisode(e.episode));
  const next = episodes.map((e) => nextStates(e, D));
  const bare = bestOf(3, () => {
    for (const s of next) target.evaluate(s, s.length / D);
  });
  const tdOnly = (rule: 'dqn' | 'double') =>
    bestOf(3, () => {
      for (const info of file.episodes) {
        const e = file.readEpisode(info.episode);
        const ns = nextStates(e, D);
        const targetNext = target.evaluate(ns, e.n);
        const onlineNext = rule === 'double' ? e.q : null;
        tdSeries({ n: e.n, actionCount: A, reward: e.reward, flags: e.flags, q: e.q, action: e.action, targetNext, onlineNext }, { rule, gamma: 0.99, n: 1, truncation: 'bootstrap' });
      }
    });
  const dqn = tdOnly('dqn');
  const dbl = tdOnly('double');
  const full = bestOf(3, () => {
    for (const info of file.episodes) episodeSeries(file.readEpisode(info.episode), file.header, { target: q, td: { rule: 'double' } });
  });
  target.dispose();
  const f = {
    steps: STEPS,
    backend: target.backend === 'wasm' ? 1 : 0,
    bareForwardStepsPerSecond: STEPS / bare.seconds,
    tdDqnStepsPerSecond: STEPS / dqn.seconds,
    tdDoubleStepsPerSecond: STEPS / dbl.seconds,
    fullSeriesStepsPerSecond: STEPS / full.seconds,
    tdDqnVsBareForward: bare.seconds / dqn.seconds,
    tdDoubleVsBareForward: bare.seconds / dbl.seconds,
  };
  const rows: BenchRow[] = [
    { what: `bare forward pass (${target.backend})`, value: f.bareForwardStepsPerSecond, unit: 'steps/s' },
    { what: 'TD recomputation, dqn rule (read + forward + TD)', value: f.tdDqnStepsPerSecond, unit: 'steps/s', target: '≥ 1,000,000', ok: f.tdDqnStepsPerSecond >= 1e6 },
    { what: '  dqn / bare forward', value: f.tdDqnVsBareForward, unit: '×', target: '≥ 0.5', ok: f.tdDqnVsBareForward >= 0.5 },
    { what: 'TD recomputation, double rule', value: f.tdDoubleStepsPerSecond, unit: 'steps/s', target: '≥ 1,000,000', ok: f.tdDoubleStepsPerSecond >= 1e6 },
    { what: '  double / bare forward', value: f.tdDoubleVsBareForward, unit: '×', target: '≥ 0.5', ok: f.tdDoubleVsBareForward >= 0.5 },
    { what: 'every per-step series (greedy, gap, returns, TD)', value: f.fullSeriesStepsPerSecond, unit: 'steps/s' },
  ];
  return { rows, figures: f };
}

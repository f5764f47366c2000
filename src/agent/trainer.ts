/**
 * Deep Q-learning (Mnih et al. 2015) with an optional Double DQN target (van Hasselt et al. 2016),
 * written to be watched: every step, episode end and weight change goes to a Recorder.
 *
 * Read top to bottom: setup, the training episode loop, one update, evaluation, the summary.
 * The maths lives in targets.ts (TD target) and in `update` (Huber loss on Q(s, a) − y, Adam);
 * everything else is plumbing.
 */
import * as tf from '@tensorflow/tfjs';
import type { ControlSystem } from '../envs/types.ts';
import type { DenseLayer } from '../../formats/types.ts';
import type { Recorder } from '../record/types.ts';
import { buildQNetwork, clipByGlobalNorm, copyWeights, qValues, toDenseLayers } from './network.ts';
import { Random, deriveSeed } from './random.ts';
import { ReplayBuffer, createMinibatch } from './replay.ts';
import { resolveSettings, type DqnSettings } from './settings.ts';
import { rowArgmax, rowMax, tdTargets } from './targets.ts';

export interface ProgressInfo {
  /** What just finished: a training episode or an evaluation round. */
  kind: 'episode' | 'eval';
  /** Training steps taken so far, of `totalSteps`. */
  step: number;
  totalSteps: number;
  /** Episodes ended so far, training and evaluation together. */
  episodes: number;
  updates: number;
  syncs: number;
  epsilon: number;
  /** Undiscounted return of the training episode that just ended, or the mean over the round. */
  return: number;
  /** Mean Huber loss over the updates since the previous report; NaN if there were none. */
  meanLoss: number;
  /** Mean of max_a Q(s, a) over the held-out states (Mnih et al. 2015); NaN until any are held. */
  averageMaxQ: number;
  /** Live TensorFlow.js tensors, so a leak shows while it happens. */
  liveTensors: number;
}

export interface TrainHooks {
  recorder?: Recorder;
  onProgress?(info: ProgressInfo): void;
  /** Stops the run at the next step; the open episode ends with outcome 'ended'. */
  signal?: AbortSignal;
}

export interface EvalRound {
  /** Training steps taken when the round ran. */
  afterStep: number;
  updates: number;
  returns: number[];
  meanReturn: number;
}

export interface TrainSummary {
  /** TensorFlow.js backend the run used; call initBackend() first to get 'wasm'. */
  backend: string;
  settings: DqnSettings;
  /** Training environment steps taken (evaluation steps not included). */
  steps: number;
  evalSteps: number;
  /** Episodes ended, training and evaluation together (as many as the recorder saw). */
  episodes: number;
  /** Undiscounted return of each training episode that ended by itself or by the time limit, in order; one cut short by the step budget or an abort is left out. */
  trainingReturns: number[];
  evalRounds: EvalRound[];
  /** Every evaluation return, round after round. */
  evalReturns: number[];
  updates: number;
  syncs: number;
  snapshots: number;
  /** Mean max_a Q over the held-out states with the final online weights; NaN if none were held. */
  finalAverageMaxQ: number;
  /** The online network's final weights. */
  finalOnline: DenseLayer[];
  aborted: boolean;
  wallTimeMs: number;
}

/** ε after `step` training steps: linear from `start` to `end` over `decaySteps`, then flat (Mnih et al. 2015). */
export function linearEpsilon(step: number, start: number, end: number, decaySteps: number): number {
  if (decaySteps <= 0 || step >= decaySteps) return end;
  return start + (end - start) * (step / decaySteps);
}

export async function trainDqn(system: ControlSystem, partial: Partial<DqnSettings> = {}, hooks: TrainHooks = {}): Promise<TrainSummary> {
  const settings = resolveSettings(partial);
  const s = settings;
  const { recorder, onProgress, signal } = hooks;
  const startedAt = performance.now();
  await tf.ready();

  // ---- setup -------------------------------------------------------------------------------
  const D = system.stateDims.length;
  const A = system.actions.length;
  if (D < 1 || A < 1) throw new Error(`trainDqn: the control system has ${D} state dimensions and ${A} actions; expected at least one of each`);
  const shape = { inputs: D, hidden: s.hiddenLayers, outputs: A, activation: s.activation, seed: s.seed };
  const online = buildQNetwork(shape);
  const target = buildQNetwork(shape);
  target.trainable = false;
  copyWeights(online, target);
  const optimizer = tf.train.adam(s.learningRate);
  const onlineVariables = online.trainableWeights.map((w) => w.read() as tf.Variable);

  // Separate streams, so that e.g. changing evalEpsilon leaves the agent's training draws untouched
  // (start states still follow the control system's own generator, which evaluation also draws on).
  const actRng = new Random(deriveSeed(s.seed, 0));
  const sampleRng = new Random(deriveSeed(s.seed, 1));
  const evalRng = new Random(deriveSeed(s.seed, 2));

  const replay = new ReplayBuffer(s.replayCapacity, D, s.batchSize);
  const batch = createMinibatch(s.batchSize, D);
  const targetValues = new Float32Array(s.batchSize);
  // Built here rather than with tf.oneHot, which refuses a single action.
  const takenMask = new Float32Array(s.batchSize * A);
  // Held-out states are the first states of training, when ε ≈ 1 makes the policy nearly random;
  // Mnih et al. (2015) gathered theirs with a random policy before training instead.
  const heldOut = new Float32Array(s.heldOutStates * D);
  let heldOutCount = 0;
  let state = new Float32Array(D);
  let nextState = new Float32Array(D);
  const choice = { action: 0, explored: false };

  let step = 0;
  let evalSteps = 0;
  let updates = 0;
  let syncs = 0;
  let snapshots = 0;
  let episodes = 0;
  let lossSum = 0;
  let lossCount = 0;
  let aborted = false;
  const trainingReturns: number[] = [];
  const evalRounds: EvalRound[] = [];

  /** `store: false` names the new weights in force without writing them (syncs between stored ones). */
  const snapshot = (role: 'online' | 'target', store = true): void => {
    if (!recorder) return;
    recorder.snapshot({ role, trainingStep: updates, layers: toDenseLayers(role === 'online' ? online : target), store });
    if (store) snapshots++;
  };
  const readObservation = (observation: Float32Array, into: Float32Array, where: string): void => {
    if (observation.length !== D) throw new Error(`trainDqn: ${where} returned ${observation.length} values; expected ${D} (stateDims)`);
    // Copied, in case the control system reuses one array for every observation.
    into.set(observation);
  };
  const averageMaxQ = (): number => {
    if (heldOutCount === 0) return NaN;
    const q = qValues(online, heldOut.subarray(0, heldOutCount * D), heldOutCount);
    let sum = 0;
    for (let i = 0; i < heldOutCount; i++) sum += rowMax(q, i * A, A);
    return sum / heldOutCount;
  };
  const report = (kind: ProgressInfo['kind'], value: number): void => {
    if (!onProgress) return;
    onProgress({
      kind, step, totalSteps: s.totalSteps, episodes, updates, syncs,
      epsilon: linearEpsilon(step, s.epsilonStart, s.epsilonEnd, s.epsilonDecaySteps),
      return: value, meanLoss: lossCount ? lossSum / lossCount : NaN,
      averageMaxQ: averageMaxQ(), liveTensors: tf.memory().numTensors,
    });
    lossSum = 0;
    lossCount = 0;
  };

  // ---- one update: minibatch Huber loss on δ = y − Q(s, a), one Adam step --------------------
  const update = (): number => {
    replay.gather(replay.sampleIndices(s.batchSize, sampleRng), batch);
    const nextQTarget = qValues(target, batch.nextStates, s.batchSize);
    const nextQOnline = s.rule === 'double' ? qValues(online, batch.nextStates, s.batchSize) : null;
    tdTargets({ rule: s.rule, gamma: s.gamma, actionCount: A, rewards: batch.rewards, terminals: batch.terminals, nextQTarget, nextQOnline }, targetValues);
    takenMask.fill(0);
    for (let i = 0; i < s.batchSize; i++) takenMask[i * A + batch.actions[i]] = 1;
    return tf.tidy(() => {
      const states = tf.tensor2d(batch.states, [s.batchSize, D]);
      const taken = tf.tensor2d(takenMask, [s.batchSize, A]);
      const y = tf.tensor1d(targetValues);
      const loss = (): tf.Scalar => {
        const q = online.apply(states, { training: true }) as tf.Tensor2D;
        const qTaken = tf.sum(tf.mul(q, taken), 1);
        // Huber (1964) with threshold δ; δ = 1 equals the error clip of Mnih et al. (2015).
        return tf.losses.huberLoss(y, qTaken, undefined, s.huberDelta) as tf.Scalar;
      };
      const { value, grads } = optimizer.computeGradients(loss, onlineVariables);
      const applied = s.gradientClipNorm === null ? grads : clipByGlobalNorm(grads, s.gradientClipNorm);
      optimizer.applyGradients(Object.keys(applied).map((name) => ({ name, tensor: applied[name] })));
      return value.dataSync()[0];
    });
  };

  const learnAfterStep = (): void => {
    if (step < s.replayStart || step % s.trainEvery !== 0) return;
    const loss = update();
    updates++;
    lossSum += loss;
    lossCount++;
    if (updates % s.targetSync !== 0) return;
    copyWeights(online, target);
    syncs++;
    const store = syncs % s.snapshotEverySyncs === 0;
    snapshot('target', store);
    snapshot('online', store);
  };

  const endEpisode = (outcome: 'terminal' | 'truncated' | 'ended', failed: boolean, reason: string, mode: 'train' | 'eval'): void => {
    episodes++;
    recorder?.endEpisode({ outcome, failed, reason, mode, finalState: state, finalQ: qValues(online, state, 1) });
  };

  // ---- evaluation: greedy (or evalEpsilon) episodes, no learning, no replay writes ------------
  const evaluate = (): void => {
    // Online weights have moved since the last sync; record the ones in force for the whole round.
    snapshot('online');
    const returns: number[] = [];
    for (let e = 0; e < s.evalEpisodes && !signal?.aborted; e++) {
      readObservation(system.reset(), state, 'reset()');
      let episodeReturn = 0;
      for (let t = 0; ; t++) {
        const q = qValues(online, state, 1);
        chooseAction(q, A, s.evalEpsilon, evalRng, choice);
        const result = system.step(choice.action);
        recorder?.step({ state, action: choice.action, reward: result.reward, q, terminal: result.terminal, truncated: result.truncated, explored: choice.explored, epsilon: s.evalEpsilon });
        readObservation(result.observation, nextState, 'step()');
        [state, nextState] = [nextState, state];
        episodeReturn += result.reward;
        evalSteps++;
        if (result.terminal || result.truncated) {
          endEpisode(result.terminal ? 'terminal' : 'truncated', result.failed ?? false, result.reason ?? '', 'eval');
          break;
        }
        // A control system whose time limit never fires must not hang evaluation.
        if (t + 1 >= system.timeLimit) {
          endEpisode('ended', false, 'evaluation stopped at the time limit without a truncation', 'eval');
          break;
        }
      }
      returns.push(episodeReturn);
    }
    const meanReturn = returns.reduce((a, b) => a + b, 0) / Math.max(1, returns.length);
    evalRounds.push({ afterStep: step, updates, returns, meanReturn });
    report('eval', meanReturn);
  };
  const evaluating = s.evalEvery > 0 && s.evalEpisodes > 0;
  let nextEvalAt = s.evalEvery;

  // ---- training ------------------------------------------------------------------------------
  try {
    snapshot('target');
    snapshot('online');
    while (step < s.totalSteps && !aborted) {
      readObservation(system.reset(), state, 'reset()');
      let episodeReturn = 0;
      for (;;) {
        const epsilon = linearEpsilon(step, s.epsilonStart, s.epsilonEnd, s.epsilonDecaySteps);
        const q = qValues(online, state, 1);
        chooseAction(q, A, epsilon, actRng, choice);
        const result = system.step(choice.action);
        recorder?.step({ state, action: choice.action, reward: result.reward, q, terminal: result.terminal, truncated: result.truncated, explored: choice.explored, epsilon });
        readObservation(result.observation, nextState, 'step()');
        // Only `terminal` stops the bootstrap; a truncated step is stored as non-terminal (Pardo et al. 2018).
        replay.add(state, choice.action, result.reward, nextState, result.terminal);
        if (heldOutCount < s.heldOutStates) heldOut.set(state, D * heldOutCount++);
        [state, nextState] = [nextState, state];
        episodeReturn += result.reward;
        step++;
        learnAfterStep();
        if (result.terminal || result.truncated) {
          endEpisode(result.terminal ? 'terminal' : 'truncated', result.failed ?? false, result.reason ?? '', 'train');
          trainingReturns.push(episodeReturn);
          report('episode', episodeReturn);
          break;
        }
        aborted = signal?.aborted ?? false;
        if (step >= s.totalSteps || aborted) {
          endEpisode('ended', false, aborted ? 'training aborted' : 'training step budget reached', 'train');
          report('episode', episodeReturn);
          break;
        }
      }
      if (evaluating && !aborted && step >= nextEvalAt) {
        evaluate();
        nextEvalAt = (Math.floor(step / s.evalEvery) + 1) * s.evalEvery;
      }
      // Let timers, I/O and abort requests through between episodes.
      await yieldToEventLoop();
      aborted ||= signal?.aborted ?? false;
    }
    // A last round on the final weights, unless one just ran on them.
    if (evaluating && !aborted && evalRounds.at(-1)?.updates !== updates) evaluate();

    return {
      backend: tf.getBackend(),
      settings,
      steps: step,
      evalSteps,
      episodes,
      trainingReturns,
      evalRounds,
      evalReturns: evalRounds.flatMap((round) => round.returns),
      updates,
      syncs,
      snapshots,
      finalAverageMaxQ: averageMaxQ(),
      finalOnline: toDenseLayers(online),
      aborted,
      wallTimeMs: performance.now() - startedAt,
    };
  } finally {
    optimizer.dispose();
    online.dispose();
    target.dispose();
  }
}

/**
 * ε-greedy: with probability ε draw a uniformly random action (explored = true even when it happens
 * to equal the greedy one: the draw, not the outcome, is what ε-greedy logs); otherwise the greedy
 * action. A row with NaN has no greedy action; action 0 keeps the run going so the recorder can
 * show where the NaN appeared.
 */
export function chooseAction(q: ArrayLike<number>, actionCount: number, epsilon: number, rng: Random, into: { action: number; explored: boolean }): void {
  if (epsilon > 0 && rng.next() < epsilon) {
    into.action = rng.nextInt(actionCount);
    into.explored = true;
    return;
  }
  const greedy = rowArgmax(q, 0, actionCount);
  into.action = greedy < 0 ? 0 : greedy;
  into.explored = false;
}

const yieldToEventLoop = (): Promise<void> =>
  new Promise((resolve) => (typeof setImmediate === 'function' ? setImmediate(resolve) : setTimeout(resolve, 0)));

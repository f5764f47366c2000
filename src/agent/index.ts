/** The deep Q-learning trainer: what the CLI and the demo need from `src/agent`. */
export { defaultSettings, resolveSettings, SettingsError, HIDDEN_ACTIVATIONS, TARGET_RULES, type DqnSettings, type HiddenActivation, type TargetRule } from './settings.ts';
export { trainDqn, linearEpsilon, chooseAction, type TrainHooks, type TrainSummary, type ProgressInfo, type EvalRound } from './trainer.ts';
export { initBackend, buildQNetwork, clipByGlobalNorm, copyWeights, toDenseLayers, qValues, type BackendChoice, type NetworkShape } from './network.ts';
export { tdTargets, rowMax, rowArgmax, type TargetInputs } from './targets.ts';
export { ReplayBuffer, createMinibatch, type Minibatch } from './replay.ts';
export { Random, deriveSeed } from './random.ts';

/**
 * Q-networks from snapshots: the reference forward pass, batched evaluators on TensorFlow.js,
 * TensorFlow.js layers models, choosing a snapshot, and the SNAP argument resolver.
 *
 * forward.ts, evaluator.ts, model-json.ts, pick.ts and fit.ts run anywhere (the viewer imports them
 * directly); model-folder.ts and snapshot-source.ts read the disk through Node, so this index does.
 */
export { checkLayers, checkStates, forwardDense, type LayerChain } from './forward.ts';
export { createQEvaluator, DEFAULT_CHUNK_ROWS, type EvaluatorBackend, type QEvaluator, type QEvaluatorOptions } from './evaluator.ts';
export { denseLayersFromModelJson, ModelFolderError } from './model-json.ts';
export { loadModelFolder } from './model-folder.ts';
export { MIN_ID_PREFIX, pickSnapshot, type SnapshotQuery } from './pick.ts';
export { checkSnapshotFits } from './fit.ts';
export { loadSnapshotSpec, type LoadedSnapshot } from './snapshot-source.ts';

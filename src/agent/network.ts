/**
 * The Q-network: a plain multilayer perceptron in TensorFlow.js, plus the few operations the trainer
 * and the recorder need on it — copying weights into the target network, reading weights out as
 * `DenseLayer`s for snapshots, and batched forward passes into Float32Arrays.
 */
import * as tf from '@tensorflow/tfjs';
import { ACTIVATIONS, type Activation, type DenseLayer } from '../../formats/types.ts';
import type { HiddenActivation } from './settings.ts';
import { activate } from '../net/tf-activate.ts';

export interface NetworkShape {
  /** State dimensions D. */
  inputs: number;
  /** Units per hidden layer, input side first. */
  hidden: readonly number[];
  /** Actions A: one linear output per action. */
  outputs: number;
  activation: HiddenActivation;
  /** Seeds the kernel initialisers; layer i uses seed + i so layers differ yet the whole net repeats. */
  seed: number;
}

/**
 * Glorot-uniform kernels (Glorot & Bengio 2010) and zero biases (common practice), each kernel seeded
 * so two builds with the same seed hold identical weights.
 */
export function buildQNetwork(shape: NetworkShape): tf.Sequential {
  const model = tf.sequential();
  const sizes = [...shape.hidden, shape.outputs];
  sizes.forEach((units, i) => {
    model.add(tf.layers.dense({
      units,
      activation: i < shape.hidden.length ? shape.activation : 'linear',
      kernelInitializer: tf.initializers.glorotUniform({ seed: (shape.seed + i) >>> 0 }),
      biasInitializer: 'zeros',
      ...(i === 0 ? { inputShape: [shape.inputs] } : {}),
    }));
  });
  return model;
}

/**
 * Make `to` hold the same weights as `from`. The variables end up sharing the same backend data until
 * either is next written, so no copy is made and no tensor is left behind.
 */
export function copyWeights(from: tf.LayersModel, to: tf.LayersModel): void {
  to.setWeights(from.getWeights());
}

/**
 * Read the model's dense layers in order, copying kernels and biases out of the backend.
 * A TF.js Dense kernel has shape [inputs, outputs] stored row-major, which is exactly
 * `DenseLayer.weights`' [inputs][outputs] layout, so the values are copied as they are.
 */
export function toDenseLayers(model: tf.LayersModel): DenseLayer[] {
  return model.layers.map((layer, i) => {
    const [kernel, bias] = layer.getWeights();
    if (!kernel || !bias || kernel.shape.length !== 2) {
      throw new Error(`toDenseLayers: layer ${i} (${layer.name}) is not a dense layer with a kernel and a bias`);
    }
    const activation = String(layer.getConfig().activation);
    if (!(ACTIVATIONS as readonly string[]).includes(activation)) {
      throw new Error(`toDenseLayers: layer ${i} (${layer.name}) has activation '${activation}'; expected one of ${ACTIVATIONS.join(', ')}`);
    }
    return {
      inputs: kernel.shape[0],
      outputs: kernel.shape[1],
      // `new Float32Array(…)` copies: some backends hand out their own buffer from dataSync.
      weights: new Float32Array(kernel.dataSync() as Float32Array),
      bias: new Float32Array(bias.dataSync() as Float32Array),
      activation: activation as Activation,
    };
  });
}

/**
 * Q(s, ·) for n states in one forward pass. `states` is row-major n × D; the result is row-major
 * n × A. One tensor in, one tensor out, all intermediates freed by tf.tidy; `model.apply` rather
 * than `predict`, whose default batches of 32 are far slower on the wasm backend.
 */
export function qValues(model: tf.LayersModel, states: Float32Array, n: number): Float32Array {
  const inputs = states.length / n;
  if (!Number.isInteger(inputs)) throw new RangeError(`qValues: ${states.length} values do not make ${n} states`);
  let q!: Float32Array;
  tf.tidy(() => {
    // Layer by layer rather than model.apply: the wasm backend's fused and plain relu turn NaN into
    // 0, which would record a diverged network's Q as finite. These are the values episcope records.
    let h: tf.Tensor2D = tf.tensor2d(states, [n, inputs]);
    for (const layer of model.layers) {
      const [kernel, bias] = layer.getWeights() as tf.Tensor2D[];
      h = tf.matMul(h, kernel);
      if (bias) h = tf.add(h, bias);
      h = activate(h, activationOf(layer), true);
    }
    // dataSync may return the backend's own buffer (cpu) — fine, the tensor is freed right after.
    q = Float32Array.from(h.dataSync() as Float32Array);
  });
  return q;
}

function activationOf(layer: tf.layers.Layer): Activation {
  const name = String((layer.getConfig() as { activation?: string }).activation ?? 'linear');
  if (!(ACTIVATIONS as readonly string[]).includes(name)) throw new Error(`qValues: layer ${layer.name} has activation ${name}, which episcope does not record`);
  return name as Activation;
}

/**
 * Rescale all gradients together so their joint L2 norm is at most `maxNorm` (gradient norm
 * clipping, Pascanu, Mikolov & Bengio 2013, from memory; one norm over all parameters is common
 * practice). Call inside tf.tidy.
 */
export function clipByGlobalNorm(grads: tf.NamedTensorMap, maxNorm: number): tf.NamedTensorMap {
  const names = Object.keys(grads);
  const norm = tf.sqrt(tf.addN(names.map((name) => tf.sum(tf.square(grads[name])))));
  const scale = tf.minimum(1, tf.div(maxNorm, tf.maximum(norm, 1e-12)));
  const clipped: tf.NamedTensorMap = {};
  for (const name of names) clipped[name] = tf.mul(grads[name], scale);
  return clipped;
}

export interface BackendChoice {
  /** The backend now in force: 'wasm', or 'cpu' after a fallback. */
  backend: string;
  /** True when wasm could not be used and the pure-JS cpu backend was chosen instead. */
  fallback: boolean;
  /** Why wasm was not used, when it was not. */
  reason?: string;
}

/**
 * Switch TensorFlow.js to the wasm backend, or to 'cpu' if wasm cannot start. `setBackend` reports
 * failure by resolving to false rather than throwing (for example when the .wasm files are not where
 * it looks), so its result is checked. In a browser, pass `wasmPaths` pointing at the .wasm files;
 * in Node they load from the package.
 */
export async function initBackend(
  options: { wasmPaths?: string | Record<string, string>; warn?: (message: string) => void } = {},
): Promise<BackendChoice> {
  const warn = options.warn ?? ((message: string) => console.warn(message));
  let reason: string;
  try {
    const wasm = await import('@tensorflow/tfjs-backend-wasm');
    if (options.wasmPaths !== undefined) wasm.setWasmPaths(options.wasmPaths as Parameters<typeof wasm.setWasmPaths>[0]);
    if (await tf.setBackend('wasm')) {
      await tf.ready();
      return { backend: tf.getBackend(), fallback: false };
    }
    reason = "tf.setBackend('wasm') returned false";
  } catch (error) {
    reason = `the wasm backend failed to load: ${error instanceof Error ? error.message : String(error)}`;
  }
  if (!(await tf.setBackend('cpu'))) throw new Error(`initBackend: ${reason}, and the cpu backend did not start either`);
  await tf.ready();
  warn(`episcope: using the cpu backend (about 30× slower) because ${reason}`);
  return { backend: tf.getBackend(), fallback: true, reason };
}

/**
 * Q(s, ·) of a snapshot for many states at once — every recorded step of a run, or a grid of states
 * for a what-if — on TensorFlow.js (wasm, or cpu when wasm cannot start) or on the plain-JS
 * reference pass. The weights become tensors once; each call runs one [1, rows, D] tensor through
 * the layers and reads the result back, never `model.predict` and its default batches of 32.
 */
import * as tf from '@tensorflow/tfjs';
import type { Activation, DenseLayer } from '../../formats/types.ts';
import { initBackend } from '../agent/network.ts';
import { checkLayers, checkStates, forwardDense } from './forward.ts';
import { activate, fusable, type FusableActivation } from './tf-activate.ts';

export type EvaluatorBackend = 'auto' | 'wasm' | 'cpu' | 'js';

export interface QEvaluatorOptions {
  /**
   * 'auto' (default): TensorFlow.js on wasm, or on cpu if wasm cannot start (said in `note`).
   * 'wasm': wasm or an error. 'cpu': TensorFlow.js's pure-JS backend. 'js': `forwardDense`, no TF.
   */
  backend?: EvaluatorBackend;
  /**
   * Most rows per tensor; bounds memory for huge n. The default, 16,384 (× 64 float32 = 4 MB per
   * layer), ran 1.0–1.6× faster on wasm than 65,536 in three side-by-side runs of 1 M states.
   */
  chunkRows?: number;
  /** Where the .wasm files are served from, in a browser; Node finds them in the package. */
  wasmPaths?: string | Record<string, string>;
  /**
   * true (default): where a chunk of states cannot give a NaN or an infinity inside the network,
   * apply relu, sigmoid and elu inside the matMul kernel. false: every activation a separate op, as
   * for a chunk that could; for tests and the bench to compare the two.
   */
  fuseActivations?: boolean;
}

export interface QEvaluator {
  /** 'wasm', 'cpu' or 'js': what actually runs. */
  readonly backend: string;
  /** One sentence on which backend runs and why; always set by this version. */
  readonly note: string | null;
  /** State dimensions D the network takes. */
  readonly inputs: number;
  /** Actions A: Q-values per state. */
  readonly outputs: number;
  /** Row-major n × D states in, row-major n × A Q-values out (a new array). */
  evaluate(states: Float32Array, n: number): Float32Array;
  /** Free the weight tensors; evaluate throws afterwards. */
  dispose(): void;
}

export const DEFAULT_CHUNK_ROWS = 16_384;

export async function createQEvaluator(layers: readonly DenseLayer[], options: QEvaluatorOptions = {}): Promise<QEvaluator> {
  const shape = checkLayers(layers, 'createQEvaluator');
  const chunkRows = options.chunkRows ?? DEFAULT_CHUNK_ROWS;
  if (!Number.isSafeInteger(chunkRows) || chunkRows < 1) throw new RangeError(`createQEvaluator: chunkRows is ${chunkRows}; expected a whole number ≥ 1`);
  // Copies, so that a caller reusing its arrays cannot change the network under an evaluator.
  const own = layers.map((l) => ({ ...l, weights: Float32Array.from(l.weights), bias: Float32Array.from(l.bias) }));
  const backend = options.backend ?? 'auto';
  if (backend === 'js') return jsEvaluator(own, shape.inputs, shape.outputs);
  const started = await startTensorFlow(backend, options.wasmPaths);
  return tfEvaluator(own, shape.inputs, shape.outputs, chunkRows, options.fuseActivations ?? true, started);
}

function jsEvaluator(layers: DenseLayer[], inputs: number, outputs: number): QEvaluator {
  let disposed = false;
  return {
    backend: 'js',
    note: 'plain JavaScript reference forward pass (float64 sums, no TensorFlow.js)',
    inputs,
    outputs,
    evaluate(states, n) {
      if (disposed) throw new Error('QEvaluator.evaluate: this evaluator has been disposed');
      return forwardDense(layers, states, n);
    },
    dispose() {
      disposed = true;
    },
  };
}

interface Started {
  backend: string;
  note: string;
}

async function startTensorFlow(asked: 'auto' | 'wasm' | 'cpu', wasmPaths: QEvaluatorOptions['wasmPaths']): Promise<Started> {
  if (asked === 'cpu') {
    if (!(await tf.setBackend('cpu'))) throw new Error("createQEvaluator: tf.setBackend('cpu') returned false");
    await tf.ready();
    return { backend: 'cpu', note: 'TensorFlow.js cpu backend (pure JavaScript), as asked' };
  }
  // The fallback is reported through `note`, so initBackend is asked not to print it as well.
  const choice = await initBackend({ ...(wasmPaths === undefined ? {} : { wasmPaths }), warn: () => {} });
  if (!choice.fallback) return { backend: choice.backend, note: `TensorFlow.js ${choice.backend} backend` };
  if (asked === 'wasm') throw new Error(`createQEvaluator: the wasm backend was asked for but could not start (${choice.reason}); TensorFlow.js is now on ${choice.backend}`);
  return { backend: choice.backend, note: `wasm could not start (${choice.reason}); using ${choice.backend}` };
}

function tfEvaluator(layers: DenseLayer[], inputs: number, outputs: number, chunkRows: number, fuse: boolean, started: Started): QEvaluator {
  // Kernels as [1, inputs, outputs], the rank the matMul kernel takes, so no call reshapes them.
  const kernels = layers.map((l) => tf.tensor3d(l.weights, [1, l.inputs, l.outputs], 'float32'));
  const biases = layers.map((l) => tf.tensor1d(l.bias, 'float32'));
  const activations = layers.map((l) => l.activation);
  // What the matMul kernel applies itself when the chunk is safe; the rest follows as separate ops.
  const fusedWhenSafe = activations.map((a): FusableActivation => (fuse && fusable(a) ? a : 'linear'));
  const mayGoNonFinite = nonFiniteRisk(layers);
  const engine = tf.engine();
  let disposed = false;

  return {
    backend: started.backend,
    note: started.note,
    inputs,
    outputs,
    evaluate(states, n) {
      if (disposed) throw new Error('QEvaluator.evaluate: this evaluator has been disposed');
      checkStates(states, n, inputs, 'QEvaluator.evaluate');
      // TensorFlow.js has one backend for the whole process; running on another would silently
      // move the weights there and make `backend` untrue.
      const now = tf.getBackend();
      if (now !== started.backend) {
        throw new Error(`QEvaluator.evaluate: built on the ${started.backend} backend, but TensorFlow.js has since switched to ${now}; create the evaluator again`);
      }
      const q = new Float32Array(n * outputs);
      for (let start = 0; start < n; start += chunkRows) {
        const rows = Math.min(chunkRows, n - start);
        const chunk = states.subarray(start * inputs, (start + rows) * inputs);
        const keepNaN = mayGoNonFinite(chunk);
        tf.tidy(() => {
          let h: tf.Tensor = tf.tensor3d(chunk, [1, rows, inputs], 'float32');
          for (let k = 0; k < layers.length; k++) {
            // A fused relu turns every NaN into 0 (see tf-activate.ts), so where the chunk could
            // hold or make one, only matMul and bias run fused and the activation keeps NaN apart.
            const inKernel = keepNaN ? 'linear' : fusedWhenSafe[k];
            // The kernel itself rather than tf.fused.matMul, which around the same kernel reshapes
            // to rank 3 and back and sets up a gradient on every call. Side by side on wasm (same Q
            // to the bit), this loop ran calls of 13 rows about 2.3× as fast as tf.fused.matMul with
            // every activation apart, 125 rows 1.6×, 1,000 rows 1.2×, 16,384 rows 1.1×; fusing the
            // activation is 1.05–1.15× of that, the rest is per-call work saved.
            const attrs: tf.NamedAttrMap = { transposeA: false, transposeB: false, activation: inKernel };
            h = engine.runKernel(tf._FusedMatMul, { a: h, b: kernels[k], bias: biases[k] }, attrs) as tf.Tensor;
            if (inKernel !== activations[k]) h = activate(h, activations[k], keepNaN);
          }
          q.set(h.dataSync() as Float32Array, start * outputs);
        });
      }
      return q;
    },
    dispose() {
      if (disposed) return;
      disposed = true;
      tf.dispose([...kernels, ...biases]);
    },
  };
}

/** Far below float32's largest value (3.4 × 10³⁸), so rounding in the sums cannot reach it. */
const SAFE_MAGNITUDE = 1e30;

/**
 * A test, per chunk of states, of whether any value inside the network could be NaN or infinite;
 * when it cannot, relu needs no NaN guard and may run inside the matMul kernel. With |x| ≤ B on a layer's input, every pre-activation
 * is bounded by B · maxⱼ Σᵢ |Wᵢⱼ| + max |b|, and none of the formats' activations makes a value's
 * magnitude more than 1 larger. Non-finite weights make every chunk a risk.
 */
function nonFiniteRisk(layers: readonly DenseLayer[]): (chunk: Float32Array) => boolean {
  const gain: number[] = [];
  const offset: number[] = [];
  let weightsFinite = true;
  for (const l of layers) {
    let worstColumn = 0;
    for (let j = 0; j < l.outputs; j++) {
      let sum = 0;
      for (let i = 0; i < l.inputs; i++) sum += Math.abs(l.weights[i * l.outputs + j]);
      if (!(sum < Infinity)) weightsFinite = false;
      worstColumn = Math.max(worstColumn, sum);
    }
    let worstBias = 0;
    for (const b of l.bias) {
      if (!(Math.abs(b) < Infinity)) weightsFinite = false;
      worstBias = Math.max(worstBias, Math.abs(b));
    }
    gain.push(worstColumn);
    // softplus adds at most log 2 to |x|, and sigmoid can reach 1 from a smaller bound.
    offset.push(worstBias + (l.activation === 'softplus' || l.activation === 'sigmoid' ? 1 : 0));
  }
  return (chunk) => {
    if (!weightsFinite) return true;
    let bound = 0;
    for (let i = 0; i < chunk.length; i++) {
      const a = Math.abs(chunk[i]);
      if (!(a < Infinity)) return true;
      if (a > bound) bound = a;
    }
    for (let k = 0; k < gain.length; k++) {
      bound = gain[k] * bound + offset[k];
      if (!(bound < SAFE_MAGNITUDE)) return true;
    }
    return false;
  };
}

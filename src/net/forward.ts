/**
 * The reference forward pass of a snapshot's Q-network, in plain JavaScript: what every faster
 * evaluator is checked against, and the fallback where TensorFlow.js is not wanted. Pure: no TF,
 * no Node, no DOM.
 *
 *   h₀ = s,   hₖ = gₖ(hₖ₋₁ · Wₖ + bₖ),   Q(s, ·) = h_L
 *
 * with Wₖ row-major [inputs][outputs] as `DenseLayer` stores it. Sums are kept in float64 and
 * rounded to float32 once, at the output, so the reference is at least as exact as any float32
 * backend it judges.
 */
import { ACTIVATIONS, type Activation, type DenseLayer } from '../../formats/types.ts';

export interface LayerChain {
  /** Inputs of the first layer: the state dimensions D the network expects. */
  inputs: number;
  /** Outputs of the last layer: one Q-value per action. */
  outputs: number;
}

/**
 * Check that `layers` make one network (sizes chain, arrays hold what the sizes say) before any
 * arithmetic, so a bad snapshot is reported as such rather than as NaNs from reading past an array.
 */
export function checkLayers(layers: readonly DenseLayer[], where: string): LayerChain {
  if (layers.length === 0) throw new Error(`${where}: the network has no layers`);
  layers.forEach((l, k) => {
    const at = `${where}: layer ${k}`;
    if (!Number.isSafeInteger(l.inputs) || l.inputs < 1 || !Number.isSafeInteger(l.outputs) || l.outputs < 1) {
      throw new Error(`${at} has ${l.inputs} inputs and ${l.outputs} outputs; expected whole numbers ≥ 1`);
    }
    if (l.weights.length !== l.inputs * l.outputs) {
      throw new Error(`${at} holds ${l.weights.length} weights; ${l.inputs} inputs × ${l.outputs} outputs need ${l.inputs * l.outputs}`);
    }
    if (l.bias.length !== l.outputs) throw new Error(`${at} holds ${l.bias.length} biases; its ${l.outputs} outputs need ${l.outputs}`);
    if (!(ACTIVATIONS as readonly string[]).includes(l.activation)) {
      throw new Error(`${at} has activation '${l.activation}'; expected one of ${ACTIVATIONS.join(', ')}`);
    }
    if (k > 0 && layers[k - 1].outputs !== l.inputs) {
      throw new Error(`${at} takes ${l.inputs} inputs but layer ${k - 1} gives ${layers[k - 1].outputs}`);
    }
  });
  return { inputs: layers[0].inputs, outputs: layers[layers.length - 1].outputs };
}

/** Check `states` is n rows of `inputs` values; shared by every evaluator so they refuse alike. */
export function checkStates(states: Float32Array, n: number, inputs: number, where: string): void {
  if (!Number.isSafeInteger(n) || n < 0) throw new RangeError(`${where}: n is ${n}; expected a whole number of states ≥ 0`);
  if (states.length !== n * inputs) {
    throw new RangeError(`${where}: ${states.length} values are not ${n} states of ${inputs} (expected ${n * inputs})`);
  }
}

/**
 * Q-values of n states: `states` row-major n × D in, row-major n × A out (into `out` when given,
 * which must hold at least n × A values). NaN and infinite inputs or weights are carried through
 * by IEEE arithmetic, never refused: a non-finite Q is evidence of what the network did.
 */
export function forwardDense(layers: readonly DenseLayer[], states: Float32Array, n: number, out?: Float32Array): Float32Array {
  const { inputs, outputs } = checkLayers(layers, 'forwardDense');
  checkStates(states, n, inputs, 'forwardDense');
  const q = out ?? new Float32Array(n * outputs);
  if (q.length < n * outputs) throw new RangeError(`forwardDense: out holds ${q.length} values; ${n} states × ${outputs} actions need ${n * outputs}`);

  // Each layer's weights transposed to [outputs][inputs] in float64, once per call: every unit
  // then is a dot product over contiguous memory summed in local variables, which measured about
  // 1.3× faster on a 4→64→64→2 network than accumulating into an array in storage order.
  const plan = layers.map((l) => {
    const wt = new Float64Array(l.inputs * l.outputs);
    for (let i = 0; i < l.inputs; i++) for (let j = 0; j < l.outputs; j++) wt[j * l.inputs + i] = l.weights[i * l.outputs + j];
    return { I: l.inputs, O: l.outputs, wt, bias: Float64Array.from(l.bias), activation: l.activation };
  });
  let widest = inputs;
  for (const l of layers) widest = Math.max(widest, l.outputs);
  let h = new Float64Array(widest);
  let next = new Float64Array(widest);
  for (let r = 0; r < n; r++) {
    const row = r * inputs;
    for (let i = 0; i < inputs; i++) h[i] = states[row + i];
    for (let k = 0; k < plan.length; k++) {
      const { I, O, wt, bias, activation } = plan[k];
      for (let j = 0; j < O; j++) {
        const base = j * I;
        // Four partial sums let the additions overlap instead of waiting on one another.
        let s0 = 0;
        let s1 = 0;
        let s2 = 0;
        let s3 = 0;
        let i = 0;
        for (; i + 3 < I; i += 4) {
          s0 += h[i] * wt[base + i];
          s1 += h[i + 1] * wt[base + i + 1];
          s2 += h[i + 2] * wt[base + i + 2];
          s3 += h[i + 3] * wt[base + i + 3];
        }
        for (; i < I; i++) s0 += h[i] * wt[base + i];
        next[j] = s0 + s1 + (s2 + s3) + bias[j];
      }
      activate(next, O, activation);
      const t = h;
      h = next;
      next = t;
    }
    const at = r * outputs;
    for (let j = 0; j < outputs; j++) q[at + j] = h[j];
  }
  return q;
}

/**
 * The activations of formats/types.ts, applied in place to v[0..m). Each is written so that NaN
 * stays NaN (a comparison with NaN is false, so NaN takes the branch that computes with it).
 */
function activate(v: Float64Array, m: number, activation: Activation): void {
  switch (activation) {
    case 'linear':
      return;
    case 'relu':
      for (let j = 0; j < m; j++) if (v[j] < 0) v[j] = 0;
      return;
    case 'tanh':
      for (let j = 0; j < m; j++) v[j] = Math.tanh(v[j]);
      return;
    case 'sigmoid':
      for (let j = 0; j < m; j++) v[j] = 1 / (1 + Math.exp(-v[j]));
      return;
    case 'elu':
      // α = 1 (Clevert, Unterthiner & Hochreiter 2016, from memory): x for x > 0, eˣ − 1 otherwise.
      for (let j = 0; j < m; j++) if (!(v[j] > 0)) v[j] = Math.expm1(v[j]);
      return;
    case 'softplus':
      // log(1 + eˣ), rewritten as x + log(1 + e⁻ˣ) for x > 0 so that eˣ never overflows.
      for (let j = 0; j < m; j++) {
        const x = v[j];
        v[j] = x > 0 ? x + Math.log1p(Math.exp(-x)) : Math.log1p(Math.exp(x));
      }
      return;
    default: {
      const never: never = activation;
      throw new Error(`forwardDense: unknown activation '${String(never)}'`);
    }
  }
}

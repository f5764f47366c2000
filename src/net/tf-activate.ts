import * as tf from '@tensorflow/tfjs';
import type { Activation } from '../../formats/types.ts';

/**
 * The formats' activation set in TensorFlow.js ops; tf.elu has α = 1 and tf.softplus is log(1 + eˣ).
 * The wasm backend's tf.relu turns a NaN with its sign bit set into 0 (measured on 4.22: it keeps
 * 0x7FC00000, zeroes 0xFFC00000 — and ∞ − ∞ or 0 · ∞ produce the latter), so where a NaN can occur
 * relu keeps every NaN explicitly. tf.maximum(h, 0) would too, but runs about 6× slower there.
 */
export function activate<T extends tf.Tensor>(h: T, activation: Activation, keepNaN: boolean): T {
  switch (activation) {
    case 'linear':
      return h;
    case 'relu':
      return keepNaN ? tf.where(tf.isNaN(h), h, tf.relu(h)) : tf.relu(h);
    case 'tanh':
      return tf.tanh(h);
    case 'sigmoid':
      return tf.sigmoid(h);
    case 'elu':
      return tf.elu(h);
    case 'softplus':
      return tf.softplus(h);
    default: {
      const never: never = activation;
      throw new Error(`unknown activation '${String(never)}'`);
    }
  }
}

/** The formats' activations that the fused matMul kernel can apply itself. */
export type FusableActivation = 'linear' | 'relu' | 'sigmoid' | 'elu';

/**
 * Whether the `_FusedMatMul` kernel applies `activation` inside the matMul on both backends the
 * evaluator runs on. Read from the 4.22 sources: tfjs-backend-wasm `FusableActivation`
 * (dist/kernels/types.js: linear, relu, relu6, prelu, leakyrelu, sigmoid, elu) and
 * tfjs-backend-cpu `applyActivation` (dist/utils/fused_utils.js: the same set); tanh and softplus
 * are in neither.
 *
 * Fused, relu is XNNPACK's output clamp at 0 (tfjs-backend-wasm src/cc/batch_mat_mul_impl.cc,
 * fused_batch_mat_mul), which on wasm turns *every* NaN into 0 (measured on 4.22, both sign bits),
 * worse than tf.relu above; so fuse only where no NaN can arise. Fused
 * sigmoid and elu gave bit-identical results to tf.sigmoid and tf.elu on wasm and cpu (measured on
 * ±10^k for k from −38 to 38 in steps of ½, ±3e38 and every 0.01 in [−100, 100]), and kept NaN.
 */
export function fusable(activation: Activation): activation is FusableActivation {
  return activation === 'linear' || activation === 'relu' || activation === 'sigmoid' || activation === 'elu';
}

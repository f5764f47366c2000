import * as tf from '@tensorflow/tfjs';
import type { Activation } from '../../formats/types.ts';

/**
 * The formats' activation set in TensorFlow.js ops; tf.elu has α = 1 and tf.softplus is log(1 + eˣ).
 * The wasm backend's tf.relu turns a NaN with its sign bit set into 0 (measured on 4.22: it keeps
 * 0x7FC00000, zeroes 0xFFC00000 — and ∞ − ∞ or 0 · ∞ produce the latter), so where a NaN can occur
 * relu keeps every NaN explicitly. tf.maximum(h, 0) would too, but runs about 6× slower there.
 */
export function activate(h: tf.Tensor2D, activation: Activation, keepNaN: boolean): tf.Tensor2D {
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


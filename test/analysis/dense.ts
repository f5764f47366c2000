/**
 * A forward pass written out by hand, independent of TensorFlow.js and of episcope's own network
 * code, so a test can compute Q from a stored snapshot and know the numbers did not come from the
 * code under test. Layers are y = activation(x · W + b), W row-major [inputs][outputs]
 * (formats/types.ts, DenseLayer).
 */
import type { DenseLayer } from '../../formats/types.ts';
import type { QFunction } from '../../src/analysis/series.ts';

function activate(v: number, activation: DenseLayer['activation']): number {
  if (activation === 'linear') return v;
  if (activation === 'relu') return v > 0 ? v : 0;
  throw new Error(`dense.ts: activation "${activation}" is not written out here; only relu and linear are`);
}

/** Q for a batch of n states (row-major n×D), as a QFunction; sums run in float64, results stored as float32 like a network's. */
export function denseQ(layers: DenseLayer[]): QFunction {
  return (states, n) => {
    const outputs = layers[layers.length - 1].outputs;
    const out = new Float32Array(n * outputs);
    let x = new Float64Array(layers[0].inputs);
    for (let row = 0; row < n; row++) {
      for (let i = 0; i < layers[0].inputs; i++) x[i] = states[row * layers[0].inputs + i];
      for (const layer of layers) {
        const y = new Float64Array(layer.outputs);
        for (let o = 0; o < layer.outputs; o++) {
          let sum = layer.bias[o];
          for (let i = 0; i < layer.inputs; i++) sum += x[i] * layer.weights[i * layer.outputs + o];
          y[o] = activate(sum, layer.activation);
        }
        x = y;
      }
      out.set(x, row * outputs);
      x = new Float64Array(layers[0].inputs);
    }
    return out;
  };
}

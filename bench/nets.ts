/** The network both the TD and the viewer benches measure: 4→64→64→2, relu, Glorot-uniform weights, seeded. */
import type { DenseLayer } from '../formats/types.ts';
import { createRandom } from '../src/envs/random.ts';

export function randomNet(seed: number, sizes: number[] = [4, 64, 64, 2]): DenseLayer[] {
  const rng = createRandom(seed);
  return sizes.slice(1).map((outputs, i) => {
    const inputs = sizes[i];
    const scale = Math.sqrt(6 / (inputs + outputs));
    return {
      inputs,
      outputs,
      activation: i === sizes.length - 2 ? 'linear' : 'relu',
      weights: Float32Array.from({ length: inputs * outputs }, () => rng.uniform(-scale, scale)),
      bias: new Float32Array(outputs),
    } as DenseLayer;
  });
}

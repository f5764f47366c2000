/**
 * Whether a network fits a recording: it must take the recording's state and give one Q-value per
 * action. Pure, for the CLI and the viewer alike.
 */
import type { DenseLayer, Header } from '../../formats/types.ts';

/**
 * Throw unless the network takes the recording's state and gives one Q-value per action; both
 * sizes are named, and the state's dimensions listed, so the user sees which side is off.
 */
export function checkSnapshotFits(layers: readonly DenseLayer[], header: Pick<Header, 'stateDims' | 'actions'>, source: string): void {
  if (layers.length === 0) throw new Error(`${source}: the network has no layers`);
  const inputs = layers[0].inputs;
  const outputs = layers[layers.length - 1].outputs;
  const D = header.stateDims.length;
  const A = header.actions.length;
  const problems: string[] = [];
  if (inputs !== D) {
    problems.push(`the network takes ${plural(inputs, 'input')} but the recording's state has ${plural(D, 'dimension')} (${header.stateDims.map((d) => d.name).join(', ')})`);
  }
  if (outputs !== A) {
    problems.push(`the network gives ${plural(outputs, 'Q-value')} per state but the recording has ${plural(A, 'action')} (${header.actions.join(', ')})`);
  }
  if (problems.length) throw new Error(`${source}: ${problems.join('; and ')}`);
}

const plural = (n: number, word: string) => `${n} ${word}${n === 1 ? '' : 's'}`;

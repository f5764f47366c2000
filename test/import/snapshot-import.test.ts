/**
 * `episcope snapshot import`: a network saved by TensorFlow.js's own model.save becomes a step
 * file with one snapshot whose layers are the model's weights exactly, with the role and training
 * step given; `episcope td` then takes that file as its --target.
 */
import * as tf from '@tensorflow/tfjs';
import { mkdirSync, writeFileSync } from 'node:fs';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { openStepFilePath } from '../../formats/node.ts';
import { importCommand } from '../../src/cli/import.ts';
import { snapshotCommand } from '../../src/cli/snapshot-import.ts';
import { tdCommand } from '../../src/cli/td.ts';
import { runCommand, scratchFolder, seededLog, toJsonl } from './helpers.ts';

const scratch = scratchFolder('snapshot-import');
let folder: string;
let weights: number[][];

beforeAll(async () => {
  expect(await tf.setBackend('cpu')).toBe(true);
  const model = tf.sequential({
    layers: [
      tf.layers.dense({ units: 8, inputShape: [3], activation: 'relu', biasInitializer: 'randomNormal' }),
      tf.layers.dense({ units: 2, biasInitializer: 'randomNormal' }),
    ],
  });
  weights = model.getWeights().map((w) => Array.from(w.dataSync()));
  folder = scratch.path('model');
  mkdirSync(folder);
  await model.save(
    tf.io.withSaveHandler(async (a) => {
      writeFileSync(`${folder}/model.json`, JSON.stringify({ format: 'layers-model', modelTopology: a.modelTopology, weightsManifest: [{ paths: ['weights.bin'], weights: a.weightSpecs }] }));
      writeFileSync(`${folder}/weights.bin`, new Uint8Array(tf.io.CompositeArrayBuffer.join(a.weightData!)));
      return { modelArtifactsInfo: { dateSaved: new Date(), modelTopologyType: 'JSON' } };
    }),
  );
  model.dispose();
});
afterAll(() => scratch.remove());

describe('episcope snapshot import', () => {
  it('writes a header sized from the network and one snapshot holding its weights, role and training step', async () => {
    const out = scratch.path('target.steps');
    const r = await runCommand(snapshotCommand, ['import', folder, '-o', out, '--role', 'target', '--step', '1200']);
    expect(r.code).toBe(0);
    expect(r.err).toContain('no --gamma given; the header says γ = 0.99');
    expect(r.out).toMatch(/^wrote .*target\.steps \(.+ bytes\): the target network 3→8→2, id [0-9a-f]{16}, training step 1200; use it as: episcope td FILE --target /);
    const file = openStepFilePath(out);
    expect(file.header.stateDims.map((d) => d.name)).toEqual(['s0', 's1', 's2']);
    expect(file.header.actions).toEqual(['a0', 'a1']);
    expect(file.episodes).toEqual([]);
    expect(file.snapshots).toHaveLength(1);
    const ref = file.snapshots[0];
    expect([ref.role, ref.trainingStep, ref.hasLayers]).toEqual(['target', 1200, true]);
    const snap = file.readSnapshot(ref);
    expect(snap.layers.map((l) => [l.inputs, l.outputs, l.activation])).toEqual([[3, 8, 'relu'], [8, 2, 'linear']]);
    // kernel, bias, kernel, bias: TensorFlow.js's getWeights order, element for element.
    expect(snap.layers.flatMap((l) => [Array.from(l.weights), Array.from(l.bias)])).toEqual(weights);
    file.close();
  });

  it('takes names, γ and the online role; the training step defaults to 0', async () => {
    const out = scratch.path('online.steps');
    const r = await runCommand(snapshotCommand, ['import', folder, '-o', out, '--role', 'online', '--state-dims', 'x,v,w', '--actions', 'left,right', '--gamma', '0.9']);
    expect([r.code, r.err]).toEqual([0, '']);
    const file = openStepFilePath(out);
    expect(file.header.stateDims.map((d) => d.name)).toEqual(['x', 'v', 'w']);
    expect(file.header.actions).toEqual(['left', 'right']);
    expect(file.header.gamma).toBe(0.9);
    expect([file.snapshots[0].role, file.snapshots[0].trainingStep]).toEqual(['online', 0]);
    file.close();
  });

  it('is the --target of episcope td on a recording of the same sizes', async () => {
    const snap = scratch.path('for-td.steps');
    expect((await runCommand(snapshotCommand, ['import', folder, '-o', snap, '--role', 'target'])).code).toBe(0);
    const log = scratch.path('run.jsonl');
    writeFileSync(log, toJsonl(seededLog(11, 4).map((s) => ({ ...s, state: s.state.map((v) => (Number.isFinite(v) ? v : 0)) }))));
    const recording = scratch.path('run.steps');
    expect((await runCommand(importCommand, [log, '-o', recording, '--gamma', '0.9'])).code).toBe(0);
    const td = await runCommand(tdCommand, [recording, '--target', snap, '--json']);
    expect(td.code).toBe(0);
    const doc = JSON.parse(td.out);
    const file = openStepFilePath(snap);
    expect(doc.target.id).toBe(file.snapshots[0].id);
    file.close();
    expect(doc.episodes).toHaveLength(4);
  });

  it.each([
    [['import', '{folder}', '-o', '{out}', '--role', 'target', '--state-dims', 'x,v'], '--state-dims names 2 dimensions; the network in {folder} takes 3 inputs'],
    [['import', '{folder}', '-o', '{out}', '--role', 'target', '--actions', 'a,b,c'], '--actions names 3 actions; the network in {folder} gives 2 Q-values'],
    [['import', '{folder}', '-o', '{out}'], 'episcope snapshot import: --role target|online is required'],
    [['import', '{folder}', '-o', '{out}', '--role', 'behaviour'], 'episcope snapshot import: --role "behaviour" is not target or online'],
    [['import', '{folder}', '-o', '{out}', '--role', 'target', '--step=-3'], 'episcope snapshot import: --step "-3" is not a whole number ≥ 0'],
    [['import', '{empty}', '-o', '{out}', '--role', 'target'], 'episcope snapshot import: {empty}: has no model.json; expected a TensorFlow.js layers-model folder'],
    [['export', '{folder}'], 'episcope snapshot: unknown sub-command "export"'],
    [[], 'episcope snapshot: expected a sub-command'],
  ])('refuses %j in one line, exit 2, writing nothing', async (argv, message) => {
    const sub = scratchFolder('snapshot-bad');
    try {
      const empty = sub.path('empty');
      mkdirSync(empty);
      const fill = (s: string) => s.replace('{folder}', folder).replace('{out}', sub.path('out.steps')).replace('{empty}', empty);
      const r = await runCommand(snapshotCommand, argv.map(fill));
      expect(r.code).toBe(2);
      expect(r.err).toContain(fill(message));
      expect(r.err.trimEnd().split('\n')).toHaveLength(1);
      expect(sub.files()).toEqual(['empty']);
    } finally {
      sub.remove();
    }
  });

  it('never replaces an existing file without --force', async () => {
    const out = scratch.path('taken.steps');
    writeFileSync(out, 'an earlier recording');
    const r = await runCommand(snapshotCommand, ['import', folder, '-o', out, '--role', 'target']);
    expect(r.code).toBe(2);
    expect(r.err).toContain('already exists; refusing to overwrite a recording (pass --force to replace it)');
    expect((await runCommand(snapshotCommand, ['import', folder, '-o', out, '--role', 'target', '--force'])).code).toBe(0);
    const file = openStepFilePath(out);
    expect(file.snapshots).toHaveLength(1);
    file.close();
  });
});

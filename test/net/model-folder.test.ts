import * as tf from '@tensorflow/tfjs';
import { mkdirSync, mkdtempSync, readFileSync, rmSync, unlinkSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { forwardDense } from '../../src/net/forward.ts';
import { loadModelFolder } from '../../src/net/model-folder.ts';
import { denseLayersFromModelJson } from '../../src/net/model-json.ts';
import { mismatches, randomStates } from './helpers.ts';

let root: string;
let count = 0;
beforeAll(async () => {
  expect(await tf.setBackend('cpu')).toBe(true);
  root = mkdtempSync(join(tmpdir(), 'episcope-net-'));
});
afterAll(() => rmSync(root, { recursive: true, force: true }));

// eslint-disable-next-line @typescript-eslint/no-explicit-any
type ModelJson = any;

/**
 * Save `model` through TensorFlow.js's own model.save, which hands over exactly the standard
 * artifacts, and write them as a layers-model folder: model.json plus one weights.bin. `edit` may
 * change model.json before it is written, to make a broken folder.
 */
async function saveFolder(model: tf.LayersModel, edit?: (json: ModelJson) => void): Promise<string> {
  const dir = join(root, `model-${++count}`);
  mkdirSync(dir);
  await model.save(tf.io.withSaveHandler(async (artifacts) => {
    const json: ModelJson = {
      format: 'layers-model',
      generatedBy: artifacts.generatedBy,
      convertedBy: null,
      modelTopology: artifacts.modelTopology,
      weightsManifest: [{ paths: ['weights.bin'], weights: artifacts.weightSpecs }],
    };
    edit?.(json);
    writeFileSync(join(dir, 'model.json'), JSON.stringify(json));
    writeFileSync(join(dir, 'weights.bin'), new Uint8Array(tf.io.CompositeArrayBuffer.join(artifacts.weightData)));
    return { modelArtifactsInfo: { dateSaved: new Date(), modelTopologyType: 'JSON' } };
  }));
  return dir;
}

/** Q from TensorFlow.js itself, in one batch of all n rows. */
function predict(model: tf.LayersModel, states: Float32Array, n: number, dims: number): Float32Array {
  return tf.tidy(() => (model.predict(tf.tensor2d(states, [n, dims]), { batchSize: n }) as tf.Tensor).dataSync() as Float32Array).slice();
}

const dense = (units: number, name: string, activation: 'linear' | 'relu' | 'tanh' | 'sigmoid' | 'elu' | 'softplus' | 'softmax' = 'linear', more: object = {}) =>
  tf.layers.dense({ units, name, activation, biasInitializer: 'randomNormal', ...more });

describe('loadModelFolder: a folder written by TensorFlow.js model.save', () => {
  it('reads a Sequential relu network: sizes, activations and weights exactly as model.getWeights holds them', async () => {
    const model = tf.sequential({ layers: [dense(16, 'r_hidden_1', 'relu', { inputShape: [4] }), dense(16, 'r_hidden_2', 'relu'), dense(2, 'r_q')] });
    const layers = loadModelFolder(await saveFolder(model));
    expect(layers.map((l) => [l.inputs, l.outputs, l.activation])).toEqual([[4, 16, 'relu'], [16, 16, 'relu'], [16, 2, 'linear']]);
    const held = model.getWeights().map((w) => Array.from(w.dataSync()));
    expect(layers.flatMap((l) => [Array.from(l.weights), Array.from(l.bias)])).toEqual(held);
    const n = 1000;
    const states = randomStates(n, 4, 1);
    expect(mismatches(forwardDense(layers, states, n), predict(model, states, n, 4), 2, 1e-5)).toEqual([]);
    model.dispose();
  });

  it('folds an Activation layer into the linear Dense before it, skips Dropout, and gives a zero bias where use_bias is false', async () => {
    const model = tf.sequential({
      layers: [
        dense(8, 'a_hidden_1', 'linear', { inputShape: [4] }),
        tf.layers.activation({ activation: 'tanh', name: 'a_tanh' }),
        tf.layers.dropout({ rate: 0.3, name: 'a_dropout' }),
        dense(8, 'a_hidden_2', 'elu'),
        dense(2, 'a_q', 'linear', { useBias: false }),
      ],
    });
    const layers = loadModelFolder(await saveFolder(model));
    expect(layers.map((l) => [l.inputs, l.outputs, l.activation])).toEqual([[4, 8, 'tanh'], [8, 8, 'elu'], [8, 2, 'linear']]);
    expect(Array.from(layers[2].bias)).toEqual([0, 0]);
    const n = 500;
    const states = randomStates(n, 4, 2);
    expect(mismatches(forwardDense(layers, states, n), predict(model, states, n, 4), 2, 1e-5)).toEqual([]);
    model.dispose();
  });

  it('reads sigmoid and softplus layers', async () => {
    const model = tf.sequential({ layers: [dense(6, 's_hidden_1', 'sigmoid', { inputShape: [3] }), dense(6, 's_hidden_2', 'softplus'), dense(3, 's_q')] });
    const layers = loadModelFolder(await saveFolder(model));
    expect(layers.map((l) => l.activation)).toEqual(['sigmoid', 'softplus', 'linear']);
    const states = randomStates(300, 3, 3);
    expect(mismatches(forwardDense(layers, states, 300), predict(model, states, 300, 3), 3, 1e-5)).toEqual([]);
    model.dispose();
  });

  it('reads a functional model that is one chain, InputLayer first', async () => {
    const input = tf.input({ shape: [2], name: 'f_state' });
    const h = dense(5, 'f_hidden', 'relu').apply(input) as tf.SymbolicTensor;
    const model = tf.model({ inputs: input, outputs: dense(3, 'f_q').apply(h) as tf.SymbolicTensor });
    const layers = loadModelFolder(await saveFolder(model));
    expect(layers.map((l) => [l.inputs, l.outputs, l.activation])).toEqual([[2, 5, 'relu'], [5, 3, 'linear']]);
    const states = randomStates(200, 2, 4);
    expect(mismatches(forwardDense(layers, states, 200), predict(model, states, 200, 2), 3, 1e-5)).toEqual([]);
    model.dispose();
  });
});

describe('denseLayersFromModelJson: the same reading from bytes in memory (as the viewer has them)', () => {
  it('gives what loadModelFolder gives, and names weight files as the manifest writes them', async () => {
    const model = tf.sequential({ layers: [dense(5, 'm_hidden', 'tanh', { inputShape: [3] }), dense(2, 'm_q')] });
    const dir = await saveFolder(model);
    model.dispose();
    const json = JSON.parse(readFileSync(join(dir, 'model.json'), 'utf8'));
    const bin = new Uint8Array(readFileSync(join(dir, 'weights.bin')));
    expect(denseLayersFromModelJson(json, 'model.json', () => bin)).toEqual(loadModelFolder(dir));
    expect(() => denseLayersFromModelJson(json, 'model.json', () => bin.subarray(0, 8))).toThrow("weights.bin: holds 8 bytes; model.json's weightsManifest (group 1) expects 128");
  });
});

describe('loadModelFolder: what it refuses, naming the file and what was expected', () => {
  const small = () => tf.sequential({ layers: [dense(16, 'hidden_1', 'relu', { inputShape: [4] }), dense(2, 'q')] });

  it('a missing weight file, by its path', async () => {
    const dir = await saveFolder(small());
    unlinkSync(join(dir, 'weights.bin'));
    expect(() => loadModelFolder(dir)).toThrow(`${join(dir, 'weights.bin')}: no such file; model.json's weightsManifest lists it`);
  });

  it('a weight file cut short, with both byte counts and the weights it should hold', async () => {
    const dir = await saveFolder(small());
    const bin = join(dir, 'weights.bin');
    const bytes = readFileSync(bin);
    // (4·16 + 16 + 16·2 + 2) float32 values = 114 × 4 bytes.
    expect(bytes.length).toBe(456);
    writeFileSync(bin, bytes.subarray(0, 452));
    expect(() => loadModelFolder(dir)).toThrow(
      `${bin}: holds 452 bytes; model.json's weightsManifest (group 1) expects 456 for hidden_1/kernel [4, 16], hidden_1/bias [16], q/kernel [16, 2], q/bias [2]`,
    );
  });

  it('a Conv2D layer, by name and class', async () => {
    const model = tf.sequential({
      layers: [tf.layers.conv2d({ inputShape: [5, 5, 1], filters: 2, kernelSize: 3, name: 'conv2d_1' }), tf.layers.flatten({ name: 'flat' }), dense(2, 'c_q')],
    });
    const dir = await saveFolder(model);
    expect(() => loadModelFolder(dir)).toThrow(`${join(dir, 'model.json')}: layer "conv2d_1" is a Conv2D; episcope reads dense layers (Dense, plus InputLayer, Activation, Dropout)`);
  });

  it('an activation outside the formats\' set, by layer and activation', async () => {
    const model = tf.sequential({ layers: [dense(8, 'p_hidden', 'relu', { inputShape: [4] }), dense(2, 'policy_head', 'softmax')] });
    const dir = await saveFolder(model);
    expect(() => loadModelFolder(dir)).toThrow(`${join(dir, 'model.json')}: layer "policy_head" has activation 'softmax'; episcope reads linear, relu, tanh, sigmoid, elu, softplus`);
  });

  it('float16 and quantized weights, by weight name', async () => {
    const asFloat16 = await saveFolder(small(), (json) => (json.weightsManifest[0].weights[0].dtype = 'float16'));
    expect(() => loadModelFolder(asFloat16)).toThrow(`${join(asFloat16, 'model.json')}: weight "hidden_1/kernel" is stored as float16; episcope reads float32 weights only`);
    // As a quantizing converter lays it out (from memory): dtype stays float32, one uint8 per value.
    const quantized = await saveFolder(small(), (json) => (json.weightsManifest[0].weights[2].quantization = { dtype: 'uint8', scale: 0.01, min: -1 }));
    const bin = join(quantized, 'weights.bin');
    const floats = readFileSync(bin);
    writeFileSync(bin, Buffer.concat([floats.subarray(0, 320), new Uint8Array(32).fill(128), floats.subarray(448)]));
    expect(() => loadModelFolder(quantized)).toThrow(`${join(quantized, 'model.json')}: weight "q/kernel" is stored as quantized uint8; episcope reads float32 weights only`);
  });

  it('a kernel whose shape does not match the layer config', async () => {
    const dir = await saveFolder(small(), (json) => (json.modelTopology.config.layers[0].config.units = 15));
    expect(() => loadModelFolder(dir)).toThrow(`${join(dir, 'model.json')}: weight "hidden_1/kernel" has shape [4, 16]; layer "hidden_1" needs [4, 15]`);
  });

  it('a weight the manifest does not list', async () => {
    const dir = await saveFolder(small(), (json) => (json.weightsManifest[0].weights[1].name = 'elsewhere/bias'));
    expect(() => loadModelFolder(dir)).toThrow(
      `${join(dir, 'model.json')}: layer "hidden_1" needs a weight "hidden_1/bias" of shape [16], and weightsManifest has none (it lists hidden_1/kernel, elsewhere/bias, q/kernel, q/bias)`,
    );
  });

  it('a functional model that is not one chain', async () => {
    const input = tf.input({ shape: [3], name: 'b_state' });
    const a = dense(4, 'b_left').apply(input) as tf.SymbolicTensor;
    const b = dense(4, 'b_right').apply(input) as tf.SymbolicTensor;
    const dir = await saveFolder(tf.model({ inputs: input, outputs: [a, b] }));
    expect(() => loadModelFolder(dir)).toThrow(
      `${join(dir, 'model.json')}: layer "b_right" takes its input from "b_state", not from the layer before it ("b_left"); episcope reads models that are one chain of layers`,
    );
  });

  it('a graph model, a folder without model.json, and model.json that is not JSON', async () => {
    const graph = await saveFolder(small(), (json) => (json.format = 'graph-model'));
    expect(() => loadModelFolder(graph)).toThrow('has format "graph-model"; episcope reads "layers-model" folders');
    const empty = join(root, 'no-model');
    mkdirSync(empty);
    writeFileSync(join(empty, 'notes.txt'), 'not a model');
    expect(() => loadModelFolder(empty)).toThrow(`${empty}: has no model.json; expected a TensorFlow.js layers-model folder (model.json and its .bin weight files) (it holds: notes.txt)`);
    const broken = await saveFolder(small());
    writeFileSync(join(broken, 'model.json'), '{"format": "layers-model",');
    expect(() => loadModelFolder(broken)).toThrow(`${join(broken, 'model.json')}: is not JSON`);
  });
});

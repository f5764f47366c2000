/**
 * Reads a TensorFlow.js layers model — the parsed `model.json` plus the bytes of its weight files,
 * as `model.save` or the Keras converter writes them — into `DenseLayer`s. Pure: the caller hands
 * over the files' bytes, so the viewer can use it on files picked in a browser and
 * model-folder.ts on a folder on disk.
 *
 * model.json holds `modelTopology` (a Keras model config: Sequential, or a functional Model that
 * is a single chain) and `weightsManifest`: groups, each with `paths` (weight files that, joined in
 * order, make one buffer) and `weights` [{ name, shape, dtype }] laid out back to back in that
 * buffer, little-endian. Only float32 weights are read; quantized or float16 weights are refused
 * by name rather than guessed at.
 */
import { ACTIVATIONS, type Activation, type DenseLayer } from '../../formats/types.ts';

export class ModelFolderError extends Error {
  override readonly name = 'ModelFolderError';
  constructor(
    /** model.json or a weight file, as a path the user can open. */
    readonly file: string,
    readonly detail: string,
  ) {
    super(`${file}: ${detail}`);
  }
}

const ACCEPTED = ['Dense', 'InputLayer', 'Activation', 'Dropout'];
const READ = 'Dense, plus InputLayer, Activation, Dropout';

type Obj = Record<string, unknown>;
const isObj = (x: unknown): x is Obj => typeof x === 'object' && x !== null && !Array.isArray(x);

/** Where one weight sits: its group's buffer, byte offset, and what the manifest said of it. */
interface WeightPlace {
  name: string;
  shape: number[];
  dtype: string;
  quantized: string | null;
  group: number;
  offset: number;
}

interface Group {
  paths: string[];
  bytes: number;
  weights: WeightPlace[];
}

/**
 * @param json         the parsed model.json
 * @param jsonName     what to call model.json in errors (its path)
 * @param readWeights  the bytes of a weight file, given its path as the manifest writes it
 * @param weightName   what to call a weight file in errors (defaults to the manifest's path)
 */
export function denseLayersFromModelJson(
  json: unknown,
  jsonName: string,
  readWeights: (path: string) => Uint8Array,
  weightName: (path: string) => string = (path) => path,
): DenseLayer[] {
  const fail: (detail: string) => never = (detail) => {
    throw new ModelFolderError(jsonName, detail);
  };
  if (!isObj(json)) return fail('expected a JSON object with modelTopology and weightsManifest');
  if (json.format !== undefined && json.format !== 'layers-model') {
    fail(`has format ${JSON.stringify(json.format)}; episcope reads "layers-model" folders (a Keras/TensorFlow.js layers model), not graph models`);
  }
  if (!isObj(json.modelTopology)) fail('has no modelTopology object; expected a layers model as model.save writes it');
  const topology = json.modelTopology as Obj;
  // model.save writes the model config itself; the Keras converter nests it under model_config.
  const model = isObj(topology.model_config) ? topology.model_config : topology;
  const layerConfigs = modelLayers(model, fail);
  const groups = manifestGroups(json.weightsManifest, fail);
  const byName = new Map<string, WeightPlace>();
  for (const g of groups) for (const w of g.weights) byName.set(w.name, w);

  const buffers = new Map<number, Uint8Array>();
  const groupBytes = (gi: number): Uint8Array => {
    let buf = buffers.get(gi);
    if (buf) return buf;
    const g = groups[gi];
    const parts = g.paths.map((p) => readWeights(p));
    const total = parts.reduce((s, p) => s + p.length, 0);
    if (total !== g.bytes) {
      const files = g.paths.map(weightName).join(' + ');
      const listed = g.weights.map((w) => `${w.name} [${w.shape.join(', ')}]`).join(', ');
      throw new ModelFolderError(files, `holds ${total} bytes; model.json's weightsManifest (group ${gi + 1}) expects ${g.bytes} for ${listed}`);
    }
    buf = new Uint8Array(total);
    let at = 0;
    for (const p of parts) {
      buf.set(p, at);
      at += p.length;
    }
    buffers.set(gi, buf);
    return buf;
  };

  const readWeight = (layerName: string, role: 'kernel' | 'bias', shape: number[]): Float32Array => {
    const place = findWeight(byName, layerName, role);
    if (!place) {
      fail(`layer "${layerName}" needs a weight "${layerName}/${role}" of shape [${shape.join(', ')}], and weightsManifest has none (it lists ${[...byName.keys()].join(', ') || 'no weights'})`);
    }
    const w = place;
    if (w.dtype !== 'float32' || w.quantized) {
      fail(`weight "${w.name}" is stored as ${w.quantized ? `quantized ${w.quantized}` : w.dtype}; episcope reads float32 weights only`);
    }
    if (w.shape.length !== shape.length || w.shape.some((d, i) => d !== shape[i])) {
      fail(`weight "${w.name}" has shape [${w.shape.join(', ')}]; layer "${layerName}" needs [${shape.join(', ')}]`);
    }
    const bytes = groupBytes(w.group);
    const count = shape.reduce((a, b) => a * b, 1);
    const dv = new DataView(bytes.buffer, bytes.byteOffset + w.offset, count * 4);
    const out = new Float32Array(count);
    for (let i = 0; i < count; i++) out[i] = dv.getFloat32(i * 4, true);
    return out;
  };

  const layers: DenseLayer[] = [];
  let width: number | null = null;
  // An Activation layer may only fold into the Dense just before it, and only if that Dense is linear.
  let foldable: DenseLayer | null = null;
  let foldableName = '';
  for (const { className, name, config } of layerConfigs) {
    // The class is judged first: a convolution's image-shaped input is not the interesting news.
    if (!ACCEPTED.includes(className)) fail(`layer "${name}" is a ${className}; episcope reads dense layers (${READ})`);
    const inputShape = declaredInputShape(config);
    if (inputShape) {
      if (inputShape.length !== 2 || !Number.isSafeInteger(inputShape[1]) || (inputShape[1] as number) < 1) {
        fail(`layer "${name}" takes input of shape [${inputShape.map((d) => (d === null ? 'null' : d)).join(', ')}]; episcope reads flat state vectors, shape [null, D]`);
      }
      if (width !== null && width !== inputShape[1]) fail(`layer "${name}" declares ${inputShape[1]} inputs but follows a layer with ${width} outputs`);
      width = inputShape[1] as number;
    }
    switch (className) {
      case 'InputLayer':
        break;
      case 'Dropout':
        // Keras and TensorFlow.js drop units only while training, scaling the kept ones by
        // 1 / (1 − rate) then, so at inference — all a snapshot is used for — Dropout is the
        // identity (the round-trip test with a Dropout layer checks this against model.predict).
        break;
      case 'Dense': {
        const units = config.units;
        if (!Number.isSafeInteger(units) || (units as number) < 1) fail(`layer "${name}" (Dense) has units ${JSON.stringify(units)}; expected a whole number ≥ 1`);
        const activation = activationOf(config.activation, name, fail);
        const inputs = width ?? kernelRows(findWeight(byName, name, 'kernel'));
        if (inputs === null) return fail(`layer "${name}" is the first Dense and neither an input shape nor its kernel says how many inputs it takes`);
        const outputs = units as number;
        const useBias = config.use_bias !== false;
        const layer: DenseLayer = {
          inputs,
          outputs,
          weights: readWeight(name, 'kernel', [inputs, outputs]),
          // Without a bias the layer computes x · W, which a zero bias reproduces exactly.
          bias: useBias ? readWeight(name, 'bias', [outputs]) : new Float32Array(outputs),
          activation,
        };
        layers.push(layer);
        width = outputs;
        foldable = activation === 'linear' ? layer : null;
        foldableName = name;
        continue;
      }
      case 'Activation': {
        const activation = activationOf(config.activation, name, fail);
        // The identity changes nothing, so a Dense before it can still take a later activation.
        if (activation === 'linear') continue;
        if (!foldable) {
          const last = layers[layers.length - 1];
          fail(last
            ? `layer "${name}" applies ${activation} after layer "${foldableName}"'s ${last.activation}; episcope's dense layers carry one activation each`
            : `layer "${name}" (Activation) comes before any Dense layer; episcope reads activations that follow a Dense layer`);
        }
        foldable.activation = activation;
        foldable = null;
        break;
      }
    }
    // Dropout keeps a preceding linear Dense foldable; InputLayer and a folded Activation end the chance.
    if (className !== 'Dropout') foldable = null;
  }
  if (layers.length === 0) fail(`holds no Dense layer; episcope reads dense layers (${READ})`);
  return layers;
}

interface LayerConfig {
  className: string;
  name: string;
  config: Obj;
}

/** The model's layers in order; a functional model must be one chain, input to output. */
function modelLayers(model: Obj, fail: (detail: string) => never): LayerConfig[] {
  const className = model.class_name;
  const config = model.config;
  let raw: unknown[];
  if (className === 'Sequential') {
    // Old Keras wrote a Sequential config as the bare list of layers (from memory).
    raw = Array.isArray(config) ? config : isObj(config) && Array.isArray(config.layers) ? config.layers : fail('modelTopology: the Sequential model has no list of layers');
  } else if (className === 'Model' || className === 'Functional') {
    if (!isObj(config) || !Array.isArray(config.layers)) return fail(`modelTopology: the ${className} has no list of layers`);
    raw = config.layers;
  } else {
    return fail(`modelTopology is a ${JSON.stringify(className)}; expected a Sequential or functional (Model) layers model`);
  }
  const layers = raw.map((l, i): LayerConfig => {
    if (!isObj(l) || typeof l.class_name !== 'string' || !isObj(l.config)) fail(`modelTopology: layer ${i} is not {class_name, config}`);
    const layer = l as Obj;
    const cfg = layer.config as Obj;
    const name = typeof cfg.name === 'string' ? cfg.name : typeof layer.name === 'string' ? layer.name : `#${i}`;
    return { className: layer.class_name as string, name, config: cfg };
  });
  if (className !== 'Sequential') checkChain(raw as Obj[], layers, fail);
  return layers;
}

/** Each layer of a functional model must take exactly the previous layer's output. */
function checkChain(raw: Obj[], layers: LayerConfig[], fail: (detail: string) => never): void {
  raw.forEach((l, i) => {
    const sources = inboundLayers(l.inbound_nodes);
    const name = layers[i].name;
    if (i === 0) {
      if (sources.length !== 0) fail(`layer "${name}" is listed first but takes input from ${sources.map((s) => `"${s}"`).join(', ')}`);
      return;
    }
    const previous = layers[i - 1].name;
    if (sources.length !== 1 || sources[0] !== previous) {
      fail(`layer "${name}" takes its input from ${sources.length ? sources.map((s) => `"${s}"`).join(' and ') : 'nothing'}, not from the layer before it ("${previous}"); episcope reads models that are one chain of layers`);
    }
  });
}

/**
 * Names of the layers a functional layer reads from. Keras 2 and TensorFlow.js write
 * inbound_nodes as [[[layerName, nodeIndex, tensorIndex, kwargs], …], …]; Keras 3 writes
 * [{ args: [{ config: { keras_history: [layerName, …] } }] }] (from memory).
 */
function inboundLayers(nodes: unknown): string[] {
  const out: string[] = [];
  if (!Array.isArray(nodes)) return out;
  for (const node of nodes) {
    if (Array.isArray(node)) {
      for (const t of node) if (Array.isArray(t) && typeof t[0] === 'string') out.push(t[0]);
    } else if (isObj(node) && Array.isArray(node.args)) {
      for (const a of node.args) {
        const history = isObj(a) && isObj(a.config) ? a.config.keras_history : null;
        if (Array.isArray(history) && typeof history[0] === 'string') out.push(history[0]);
      }
    }
  }
  return out;
}

/** batch_input_shape (Keras 2, TensorFlow.js) or batch_shape (Keras 3, from memory), when given. */
function declaredInputShape(config: Obj): (number | null)[] | null {
  const shape = config.batch_input_shape ?? config.batch_shape;
  return Array.isArray(shape) ? (shape as (number | null)[]) : null;
}

function activationOf(value: unknown, layerName: string, fail: (detail: string) => never): Activation {
  const name = value === undefined || value === null ? 'linear' : value;
  if (typeof name !== 'string' || !(ACTIVATIONS as readonly string[]).includes(name)) {
    return fail(`layer "${layerName}" has activation ${typeof name === 'string' ? `'${name}'` : JSON.stringify(name)}; episcope reads ${ACTIVATIONS.join(', ')}`);
  }
  return name as Activation;
}

/**
 * model.save names a layer's weights "<layer>/kernel" and "<layer>/bias"; some converters put a
 * scope in front ("<model>/<layer>/kernel", from memory), accepted when only one weight matches.
 */
function findWeight(byName: Map<string, WeightPlace>, layerName: string, role: 'kernel' | 'bias'): WeightPlace | null {
  const exact = byName.get(`${layerName}/${role}`);
  if (exact) return exact;
  const suffix = `/${layerName}/${role}`;
  const scoped = [...byName.values()].filter((w) => w.name.endsWith(suffix));
  return scoped.length === 1 ? scoped[0] : null;
}

function kernelRows(w: WeightPlace | null): number | null {
  return w && w.shape.length === 2 ? w.shape[0] : null;
}

/** Bytes per element of each dtype a manifest may hold, so weights after one we skip are found. */
const DTYPE_BYTES: Record<string, number> = { float32: 4, int32: 4, float16: 2, uint8: 1, int8: 1, uint16: 2, int16: 2, bool: 1, complex64: 8 };

function manifestGroups(manifest: unknown, fail: (detail: string) => never): Group[] {
  if (!Array.isArray(manifest)) return fail('has no weightsManifest list; expected [{ paths, weights }]');
  return manifest.map((g, gi): Group => {
    const where = `weightsManifest group ${gi + 1}`;
    if (!isObj(g) || !Array.isArray(g.paths) || !g.paths.every((p) => typeof p === 'string') || !Array.isArray(g.weights)) {
      return fail(`${where}: expected { paths: [file, …], weights: [{ name, shape, dtype }, …] }`);
    }
    for (const p of g.paths as string[]) {
      if (/^[a-z][a-z0-9+.-]*:\/\//i.test(p)) fail(`${where}: weight file "${p}" is a URL; episcope reads weight files from the model's folder only`);
    }
    let offset = 0;
    const weights = (g.weights as unknown[]).map((w, wi): WeightPlace => {
      if (!isObj(w) || typeof w.name !== 'string' || !Array.isArray(w.shape) || !w.shape.every((d) => Number.isSafeInteger(d) && d >= 0) || typeof w.dtype !== 'string') {
        return fail(`${where}, weight ${wi + 1}: expected { name, shape: [whole numbers], dtype }`);
      }
      const q = isObj(w.quantization) ? w.quantization : null;
      const quantized = q ? String(q.dtype) : null;
      const storedAs = quantized ?? w.dtype;
      const size = DTYPE_BYTES[storedAs];
      if (size === undefined) fail(`weight "${w.name}" is stored as ${storedAs}; episcope reads float32 weights only`);
      const place: WeightPlace = { name: w.name, shape: w.shape as number[], dtype: w.dtype, quantized, group: gi, offset };
      offset += (w.shape as number[]).reduce((a, b) => a * b, 1) * size;
      return place;
    });
    return { paths: g.paths as string[], bytes: offset, weights };
  });
}

/**
 * Record payloads: MessagePack maps (SPEC.md lists every field). Encoding is plain MessagePack
 * (no msgpackr extensions) so that any conforming decoder reads it; decoding validates every field
 * and throws a plain Error naming the field, which the reader wraps with the file and offset.
 */
import { Packr, Unpackr } from 'msgpackr';
import { decodeArray, encodeArray, type TypedArray } from './columns.ts';
import { decodePacked, decodePackedPlace, encodePacked } from './packed-block.ts';
import {
  ACTIVATIONS,
  FORMAT_VERSION,
  PLAIN_FORMAT_VERSION,
  type Activation,
  type DenseLayer,
  type EpisodeEnd,
  type Header,
  type Note,
  type Outcome,
  type Snapshot,
  type StepColumns,
  type WeightsRun,
} from './types.ts';

const packr = new Packr({ useRecords: false, variableMapSize: true, moreTypes: false, encodeUndefinedAsNil: true });
const unpackr = new Unpackr({ useRecords: false, mapsAsObjects: true, int64AsType: 'number' });

export function pack(value: unknown): Uint8Array {
  return packr.pack(value);
}

export function unpack(bytes: Uint8Array): unknown {
  return unpackr.unpack(bytes);
}

type Obj = Record<string, unknown>;

function obj(v: unknown, what: string): Obj {
  if (typeof v !== 'object' || v === null || Array.isArray(v) || v instanceof Uint8Array) {
    throw new Error(`${what}: expected a map`);
  }
  // A payload key named __proto__ either becomes an own key or replaces the map's prototype,
  // depending on the decoder; refuse both, so that no lookup can reach a planted prototype.
  if (Object.prototype.hasOwnProperty.call(v, '__proto__') || Object.getPrototypeOf(v) !== Object.prototype) {
    throw new Error(`${what}: has a "__proto__" key`);
  }
  return v as Obj;
}
function num(o: Obj, key: string, what: string): number {
  const v = o[key];
  if (typeof v !== 'number') throw new Error(`${what}.${key}: expected a number, found ${describe(v)}`);
  return v;
}
function count(o: Obj, key: string, what: string): number {
  const v = num(o, key, what);
  if (!Number.isSafeInteger(v) || v < 0) throw new Error(`${what}.${key}: expected a count, found ${v}`);
  return v;
}
function str(o: Obj, key: string, what: string): string {
  const v = o[key];
  if (typeof v !== 'string') throw new Error(`${what}.${key}: expected a string, found ${describe(v)}`);
  return v;
}
function list(o: Obj, key: string, what: string): unknown[] {
  const v = o[key];
  if (!Array.isArray(v)) throw new Error(`${what}.${key}: expected a list, found ${describe(v)}`);
  return v;
}
function describe(v: unknown): string {
  if (v === undefined) return 'nothing';
  if (v === null) return 'nil';
  if (v instanceof Uint8Array) return `${v.length} bytes`;
  if (Array.isArray(v)) return 'a list';
  return typeof v === 'object' ? 'a map' : JSON.stringify(v);
}
function f32Array(v: unknown, what: string, length: number, maxBytes: number): Float32Array {
  const a = decodeArray(v, what, maxBytes);
  if (!(a instanceof Float32Array)) throw new Error(`${what}: expected dtype f32`);
  if (a.length !== length) throw new Error(`${what}: holds ${a.length} values, expected ${length}`);
  return a;
}

// ---------------------------------------------------------------- header

export function encodeHeader(h: Header): Uint8Array {
  return pack({
    format: 'episcope step file',
    version: h.version,
    stateDims: h.stateDims.map((d) => ({ name: d.name, unit: d.unit })),
    actions: h.actions,
    gamma: h.gamma,
    system: { kind: h.system.kind, title: h.system.title ?? h.system.kind, map: h.system.map, params: h.system.params ?? {} },
    extras: h.extras,
    run: h.run,
    createdAt: h.createdAt ?? '',
  });
}

export function decodeHeader(bytes: Uint8Array): Header {
  const o = obj(unpack(bytes), 'header');
  const version = count(o, 'version', 'header');
  if (version < PLAIN_FORMAT_VERSION || version > FORMAT_VERSION) {
    const e = new Error(`header.version: this reader reads versions ${PLAIN_FORMAT_VERSION} to ${FORMAT_VERSION}, the file is version ${version}`);
    (e as Error & { unsupported: true }).unsupported = true;
    throw e;
  }
  const stateDims = list(o, 'stateDims', 'header').map((d, i) => {
    const m = obj(d, `header.stateDims[${i}]`);
    return { name: str(m, 'name', `header.stateDims[${i}]`), unit: str(m, 'unit', `header.stateDims[${i}]`) };
  });
  if (stateDims.length === 0) throw new Error('header.stateDims: expected at least one state dimension');
  const actions = list(o, 'actions', 'header').map((a, i) => {
    if (typeof a !== 'string') throw new Error(`header.actions[${i}]: expected a string`);
    return a;
  });
  if (actions.length === 0) throw new Error('header.actions: expected at least one action');
  const gamma = num(o, 'gamma', 'header');
  if (!(gamma >= 0 && gamma <= 1)) throw new Error(`header.gamma: expected a discount in [0, 1], found ${gamma}`);
  const sys = obj(o.system, 'header.system');
  const map = obj(sys.map, 'header.system.map');
  for (const [role, index] of Object.entries(map)) {
    if (typeof index !== 'number' || !Number.isInteger(index) || index < 0 || index >= stateDims.length) {
      throw new Error(`header.system.map.${role}: expected a state index in 0..${stateDims.length - 1}, found ${describe(index)}`);
    }
  }
  const params = sys.params === undefined ? {} : obj(sys.params, 'header.system.params');
  const extras = list(o, 'extras', 'header').map((x, i) => {
    if (typeof x !== 'string') throw new Error(`header.extras[${i}]: expected a column name`);
    return x;
  });
  return {
    version,
    stateDims,
    actions,
    gamma,
    system: {
      kind: str(sys, 'kind', 'header.system'),
      title: typeof sys.title === 'string' ? sys.title : undefined,
      map: map as Record<string, number>,
      params: params as Record<string, number>,
    },
    extras,
    run: o.run === undefined ? {} : obj(o.run, 'header.run'),
    createdAt: typeof o.createdAt === 'string' ? o.createdAt : undefined,
  };
}

// ---------------------------------------------------------------- step block

/** The smallest unsigned dtype that holds every action index. */
export function actionArrayFor(actionCount: number, n: number): Uint8Array | Uint16Array | Uint32Array {
  if (actionCount <= 256) return new Uint8Array(n);
  if (actionCount <= 65536) return new Uint16Array(n);
  return new Uint32Array(n);
}

/** A block as the recorder holds it: the decoded columns, with the action in the smallest dtype that fits. */
export type BlockToEncode = Omit<StepColumns, 'action'> & { action: Uint8Array | Uint16Array | Uint32Array };

/**
 * `packed`: the whole block as one MessagePack binary of predicted lanes (SPEC.md §5.2), for
 * version-2 files; otherwise a map with one raw array map per column (§5.1).
 */
export function encodeBlock(b: BlockToEncode, header: Header, packed: boolean): Uint8Array {
  const n = b.n;
  const stateSize = header.stateDims.length;
  const actionCount = header.actions.length;
  if (packed) {
    const columns = encodePacked({
      episode: b.episode,
      firstStep: b.firstStep,
      n,
      stateSize,
      actionCount,
      state: b.state,
      q: b.q,
      reward: b.reward,
      action: b.action,
      flags: b.flags,
      epsilon: b.epsilon,
      extras: header.extras.map((name) => b.extras[name] ?? null),
      weights: b.weights,
    });
    return pack(columns);
  }
  const col = (a: TypedArray, shape: number[]) => encodeArray(a, shape);
  const payload: Obj = {
    episode: b.episode,
    firstStep: b.firstStep,
    n,
    state: col(b.state.subarray(0, n * stateSize), [n, stateSize]),
    action: col(b.action.subarray(0, n), [n]),
    reward: col(b.reward.subarray(0, n), [n]),
    flags: col(b.flags.subarray(0, n), [n]),
    q: col(b.q.subarray(0, n * actionCount), [n, actionCount]),
    weights: b.weights,
  };
  if (b.epsilon) payload.epsilon = col(b.epsilon.subarray(0, n), [n]);
  const names = Object.keys(b.extras);
  if (names.length) payload.extras = Object.fromEntries(names.map((k) => [k, col(b.extras[k].subarray(0, n), [n])]));
  return pack(payload);
}

function checkActions(action: Uint32Array, A: number): void {
  for (let i = 0; i < action.length; i++) {
    if (action[i] >= A) throw new Error(`step block.action[${i}]: ${action[i]} is not an action index below ${A}`);
  }
}

/** Just the block's place in the file, without decoding its arrays: what a forward scan needs. */
export interface BlockPlace {
  episode: number;
  firstStep: number;
  n: number;
}

export function decodeBlockPlace(bytes: Uint8Array): BlockPlace {
  const v = unpack(bytes);
  if (v instanceof Uint8Array) {
    const { episode, firstStep, n } = decodePackedPlace(v);
    return { episode, firstStep, n };
  }
  const o = obj(v, 'step block');
  return { episode: count(o, 'episode', 'step block'), firstStep: count(o, 'firstStep', 'step block'), n: count(o, 'n', 'step block') };
}

export function decodeBlock(bytes: Uint8Array, header: Header, maxBytes: number): StepColumns {
  const v = unpack(bytes);
  const D = header.stateDims.length;
  const A = header.actions.length;
  if (v instanceof Uint8Array) {
    const c = decodePacked(v, D, A, header.extras, maxBytes);
    checkActions(c.action, A);
    return c;
  }
  const o = obj(v, 'step block');
  const n = count(o, 'n', 'step block');
  const episode = count(o, 'episode', 'step block');
  const firstStep = count(o, 'firstStep', 'step block');
  const state = f32Array(o.state, 'step block.state', n * D, maxBytes);
  const actionRaw = decodeArray(o.action, 'step block.action', maxBytes);
  if (!(actionRaw instanceof Uint8Array || actionRaw instanceof Uint16Array || actionRaw instanceof Uint32Array) || actionRaw.length !== n) {
    throw new Error(`step block.action: expected ${n} unsigned integers`);
  }
  let action: Uint32Array;
  if (actionRaw instanceof Uint32Array) action = actionRaw;
  else (action = new Uint32Array(n)).set(actionRaw);
  checkActions(action, A);
  const flags = decodeArray(o.flags, 'step block.flags', maxBytes);
  if (!(flags instanceof Uint8Array) || flags.length !== n) throw new Error(`step block.flags: expected ${n} u8 values`);
  const extras: Record<string, Float32Array> = {};
  if (o.extras !== undefined) {
    const ex = obj(o.extras, 'step block.extras');
    for (const name of Object.keys(ex)) extras[name] = f32Array(ex[name], `step block.extras.${name}`, n, maxBytes);
  }
  const weights = list(o, 'weights', 'step block').map((w, i): WeightsRun => {
    if (!Array.isArray(w) || w.length !== 3 || typeof w[0] !== 'number' || typeof w[1] !== 'string' || typeof w[2] !== 'string') {
      throw new Error(`step block.weights[${i}]: expected [row, onlineId, targetId]`);
    }
    return [w[0], w[1], w[2]];
  });
  return {
    n,
    episode,
    firstStep,
    state,
    action,
    reward: f32Array(o.reward, 'step block.reward', n, maxBytes),
    flags,
    q: f32Array(o.q, 'step block.q', n * A, maxBytes),
    epsilon: o.epsilon === undefined ? null : f32Array(o.epsilon, 'step block.epsilon', n, maxBytes),
    extras,
    weights,
  };
}

// ---------------------------------------------------------------- episode end

const OUTCOMES: readonly Outcome[] = ['terminal', 'truncated', 'ended'];

export function encodeEpisodeEnd(e: EpisodeEnd): Uint8Array {
  return pack({
    episode: e.episode,
    length: e.length,
    return: e.return,
    outcome: e.outcome,
    failed: e.failed,
    reason: e.reason,
    mode: e.mode,
    finalState: e.finalState ? encodeArray(e.finalState, [e.finalState.length]) : null,
    finalQ: e.finalQ ? encodeArray(e.finalQ, [e.finalQ.length]) : null,
  });
}

export function decodeEpisodeEnd(bytes: Uint8Array, header: Header, maxBytes: number): EpisodeEnd {
  const o = obj(unpack(bytes), 'episode end');
  const outcome = str(o, 'outcome', 'episode end') as Outcome;
  if (!OUTCOMES.includes(outcome)) throw new Error(`episode end.outcome: expected one of ${OUTCOMES.join(', ')}, found "${outcome}"`);
  if (typeof o.failed !== 'boolean') throw new Error('episode end.failed: expected true or false');
  return {
    episode: count(o, 'episode', 'episode end'),
    length: count(o, 'length', 'episode end'),
    return: num(o, 'return', 'episode end'),
    outcome,
    failed: o.failed,
    reason: str(o, 'reason', 'episode end'),
    mode: str(o, 'mode', 'episode end'),
    finalState: o.finalState == null ? null : f32Array(o.finalState, 'episode end.finalState', header.stateDims.length, maxBytes),
    finalQ: o.finalQ == null ? null : f32Array(o.finalQ, 'episode end.finalQ', header.actions.length, maxBytes),
  };
}

// ---------------------------------------------------------------- snapshot

/**
 * `withLayers: false` writes the record without weights: an earlier snapshot record in the same file
 * has the same id and so the same weights (at a target sync, the online and target nets are equal).
 */
export function encodeSnapshot(s: Snapshot, withLayers = true): Uint8Array {
  return pack({
    role: s.role,
    trainingStep: s.trainingStep,
    id: s.id,
    layers: !withLayers ? null : s.layers.map((l) => ({
      inputs: l.inputs,
      outputs: l.outputs,
      activation: l.activation,
      weights: encodeArray(l.weights, [l.inputs, l.outputs]),
      bias: encodeArray(l.bias, [l.outputs]),
    })),
  });
}

/** Snapshot facts without the weights, for listing. */
export interface SnapshotMeta {
  role: 'online' | 'target';
  trainingStep: number;
  id: string;
  /** False when the record leaves its weights to an earlier record with the same id. */
  hasLayers: boolean;
}

export function decodeSnapshotMeta(bytes: Uint8Array): SnapshotMeta {
  const o = obj(unpack(bytes), 'snapshot');
  const role = str(o, 'role', 'snapshot');
  if (role !== 'online' && role !== 'target') throw new Error(`snapshot.role: expected "online" or "target", found "${role}"`);
  if (o.layers !== null && !Array.isArray(o.layers)) throw new Error(`snapshot.layers: expected a list or nil, found ${describe(o.layers)}`);
  return { role, trainingStep: count(o, 'trainingStep', 'snapshot'), id: str(o, 'id', 'snapshot'), hasLayers: o.layers !== null };
}

/** Decodes the weights; for a record without them, returns an empty layer list (the reader resolves the id). */
export function decodeSnapshot(bytes: Uint8Array, maxBytes: number): Snapshot {
  const meta = decodeSnapshotMeta(bytes);
  const o = obj(unpack(bytes), 'snapshot');
  if (!meta.hasLayers) return { role: meta.role, trainingStep: meta.trainingStep, id: meta.id, layers: [] };
  const layers = list(o, 'layers', 'snapshot').map((l, i): DenseLayer => {
    const what = `snapshot.layers[${i}]`;
    const m = obj(l, what);
    const inputs = count(m, 'inputs', what);
    const outputs = count(m, 'outputs', what);
    const activation = str(m, 'activation', what) as Activation;
    if (!ACTIVATIONS.includes(activation)) throw new Error(`${what}.activation: "${activation}" is not one of ${ACTIVATIONS.join(', ')}`);
    return {
      inputs,
      outputs,
      activation,
      weights: f32Array(m.weights, `${what}.weights`, inputs * outputs, maxBytes),
      bias: f32Array(m.bias, `${what}.bias`, outputs, maxBytes),
    };
  });
  for (let i = 1; i < layers.length; i++) {
    if (layers[i].inputs !== layers[i - 1].outputs) {
      throw new Error(`snapshot.layers[${i}].inputs: ${layers[i].inputs} does not match the previous layer's ${layers[i - 1].outputs} outputs`);
    }
  }
  return { role: meta.role, trainingStep: meta.trainingStep, id: meta.id, layers };
}

// ---------------------------------------------------------------- note

export function encodeNote(n: Note): Uint8Array {
  return pack({ episode: n.episode, from: n.from, to: n.to, text: n.text });
}

export function decodeNote(bytes: Uint8Array): Note {
  const o = obj(unpack(bytes), 'note');
  const from = count(o, 'from', 'note');
  const to = count(o, 'to', 'note');
  if (to < from) throw new Error(`note.to: ${to} is before note.from ${from}`);
  return { episode: count(o, 'episode', 'note'), from, to, text: str(o, 'text', 'note') };
}

/**
 * The packed form of a step block's contents (SPEC.md §5.2): the weights runs and every column as
 * predicted channels with Rice-coded residuals, in one binary. A block of a short episode costs little
 * more than its values: no per-column maps, no per-column deflate tables.
 *
 * The encoder chooses, per block and channel, the predictor that makes the residuals smallest on the
 * block's first rows; the choice is written down, so a reader never guesses.
 */
import { BitReader, BitWriter, ByteReader, ByteWriter, RICE_ESCAPE } from './bitstream.ts';
import { Predict, bitCost, zigzagOfPattern, coefficientCandidates, hasCoefficient, hasRef, reconstruct, residuals, PREDICT_KINDS, type Predictor } from './channels.ts';
import type { WeightsRun } from './types.ts';

export const PACKED_LAYOUT = 1;

/** A module-local copy: an imported binding may be read through a getter in a hot loop. */
const ESCAPE = RICE_ESCAPE;

/** Rows the predictor search looks at: enough to tell predictors apart, few enough to stay cheap. */
const SEARCH_ROWS = 256;
/** Integrating predictors are searched between state channels only for systems this small (D²·14 trials). */
const MAX_SEARCH_DIMS = 16;

export interface PackedColumns {
  episode: number;
  firstStep: number;
  n: number;
  /** D and A, from the header. */
  stateSize: number;
  actionCount: number;
  state: Float32Array;
  q: Float32Array;
  reward: Float32Array;
  action: ArrayLike<number>;
  flags: Uint8Array;
  epsilon: Float32Array | null;
  /** By position in the header's `extras`; null where the block does not carry that column. */
  extras: (Float32Array | null)[];
  weights: WeightsRun[];
}

/** Channel ids: state 0…D−1, Q D…D+A−1, then reward, action, flags, ε, the extras in header order. */
function channelIds(D: number, A: number) {
  const reward = D + A;
  return { reward, action: reward + 1, flags: reward + 2, epsilon: reward + 3, extra: (i: number) => reward + 4 + i };
}

// ---------------------------------------------------------------- ids

const ID_EMPTY = 0;
const ID_SAME_AS_ONLINE = 1;
const ID_HEX8 = 2;
const ID_TEXT = 3;
const HEX16 = /^[0-9a-f]{16}$/;

function idTag(id: string, online: string | null): number {
  if (id === '') return ID_EMPTY;
  if (online !== null && id === online) return ID_SAME_AS_ONLINE;
  return HEX16.test(id) ? ID_HEX8 : ID_TEXT;
}

function writeIdBody(w: ByteWriter, id: string, tag: number): void {
  if (tag === ID_HEX8) for (let i = 0; i < 16; i += 2) w.u8(parseInt(id.slice(i, i + 2), 16));
  else if (tag === ID_TEXT) {
    const text = new TextEncoder().encode(id);
    w.varint(text.length);
    w.raw(text);
  }
}

function readIdBody(r: ByteReader, tag: number, online: string | null, what: string): string {
  if (tag === ID_EMPTY) return '';
  if (tag === ID_SAME_AS_ONLINE) {
    if (online === null) throw new Error(`${what}: an online id cannot be "the same as the online id"`);
    return online;
  }
  if (tag === ID_HEX8) {
    let s = '';
    for (const b of r.raw(8, what)) s += b.toString(16).padStart(2, '0');
    return s;
  }
  const len = r.varint(what);
  return new TextDecoder('utf-8', { fatal: true }).decode(r.raw(len, what));
}

// ---------------------------------------------------------------- encode

interface Channel {
  id: number;
  bits: Uint32Array;
  /** Float channels may be predicted by computing; integer channels only by the previous value. */
  float: boolean;
}

function column(src: ArrayLike<number>, n: number, stride: number, offset: number): Uint32Array {
  const out = new Uint32Array(n);
  for (let t = 0; t < n; t++) out[t] = src[t * stride + offset];
  return out;
}

function floatChannel(src: Float32Array, n: number, stride: number, offset: number): Uint32Array {
  const bits = new Uint32Array(src.buffer, src.byteOffset, src.length);
  return column(bits, n, stride, offset);
}

interface Choice {
  channel: Channel;
  p: Predictor;
  r: Uint32Array;
  /** The Rice parameter. */
  k: number;
}

/** The cheapest of the candidate predictors of `channel`, judged on its first rows. */
function choose(channel: Channel, candidates: Predictor[], channels: Map<number, Channel>, rows: number, scratch: Uint32Array): Predictor {
  let best = candidates[0];
  let bestCost = Infinity;
  for (const p of candidates) {
    residuals(p, channel.bits, hasRef(p.kind) ? channels.get(p.ref)!.bits : null, rows, scratch);
    const cost = bitCost(scratch, rows);
    if (cost < bestCost) {
      bestCost = cost;
      best = p;
    }
  }
  return best;
}

/**
 * The best of `current` and the integrating predictors of x from each channel in refs. The fitted
 * coefficient is tried first; its rounded forms, which can hit a time step exactly, only when
 * the fit itself beats what x has, so channels that integrate nothing cost one trial per reference.
 */
function bestIntegrator(x: Channel, current: Predictor, refs: Channel[], channels: Map<number, Channel>, rows: number, scratch: Uint32Array): Predictor {
  let best = current;
  residuals(current, x.bits, hasRef(current.kind) ? channels.get(current.ref)!.bits : null, rows, scratch);
  let bestCost = bitCost(scratch, rows);
  const trial = (p: Predictor, y: Channel) => {
    residuals(p, x.bits, y.bits, rows, scratch);
    const cost = bitCost(scratch, rows);
    if (cost < bestCost) {
      bestCost = cost;
      best = p;
    }
    return cost;
  };
  for (const y of refs) {
    for (const lag of [1, 0] as const) {
      const kind = lag === 1 ? Predict.IntegratePrevious : Predict.IntegrateCurrent;
      const cs = coefficientCandidates(x.bits, y.bits, rows, lag);
      if (cs.length === 0) continue;
      // The last candidate is the fit itself.
      const before = bestCost;
      if (trial({ kind, ref: y.id, c: cs[cs.length - 1] }, y) >= before) continue;
      for (let i = 0; i < cs.length - 1; i++) trial({ kind, ref: y.id, c: cs[i] }, y);
    }
  }
  return best;
}

/**
 * The Rice parameter with the fewest bits for residuals r[from…]. A histogram of bit lengths
 * estimates every k at once (one wild value must not drag k up, as a mean would); the best
 * estimate and its neighbours are then counted exactly.
 */
function riceParameter(r: Uint32Array, from: number): number {
  const lengths = new Float64Array(33);
  for (let t = from; t < r.length; t++) lengths[32 - Math.clz32(r[t])]++;
  const seen: number[] = [];
  for (let b = 0; b <= 32; b++) if (lengths[b]) seen.push(b);
  let guess = 0;
  let guessBits = Infinity;
  for (let k = 0; k <= 32; k++) {
    let bits = 0;
    // A value of b bits lies in [2^(b−1), 2^b): take q at three quarters of 2^(b−k), which is
    // past the escape from b − k = 6 on.
    for (const b of seen) {
      const d = b - k;
      const q = d <= 0 ? 0 : d >= 6 ? ESCAPE : (3 << d) >> 2;
      bits += lengths[b] * (q < ESCAPE ? q + 1 + k : ESCAPE + 32);
    }
    if (bits < guessBits) {
      guessBits = bits;
      guess = k;
    }
  }
  // The guess and its neighbours, counted exactly in one pass.
  const k0 = Math.max(0, Math.min(30, guess - 1));
  let b0 = 0;
  let b1 = 0;
  let b2 = 0;
  for (let t = from; t < r.length; t++) {
    const z = r[t];
    const q0 = z >>> k0;
    b0 += q0 < ESCAPE ? q0 + 1 + k0 : ESCAPE + 32;
    const q1 = q0 >>> 1;
    b1 += q1 < ESCAPE ? q1 + 2 + k0 : ESCAPE + 32;
    const q2 = q0 >>> 2;
    b2 += q2 < ESCAPE ? q2 + 3 + k0 : ESCAPE + 32;
  }
  return b0 <= b1 && b0 <= b2 ? k0 : b1 <= b2 ? k0 + 1 : k0 + 2;
}

/**
 * Whether a channel's first value is written as its 32 bits: a float channel whose predictor starts
 * from 0 would otherwise pay the escape (64 bits) for it.
 */
function firstValueRaw(float: boolean, kind: Predict): boolean {
  return float && kind !== Predict.Beside;
}

export function encodePacked(b: PackedColumns): Uint8Array {
  const { n, stateSize: D, actionCount: A } = b;
  const ids = channelIds(D, A);
  const channels: Channel[] = [];
  for (let d = 0; d < D; d++) channels.push({ id: d, bits: floatChannel(b.state, n, D, d), float: true });
  for (let a = 0; a < A; a++) channels.push({ id: D + a, bits: floatChannel(b.q, n, A, a), float: true });
  channels.push({ id: ids.reward, bits: floatChannel(b.reward, n, 1, 0), float: true });
  channels.push({ id: ids.action, bits: column(b.action, n, 1, 0), float: false });
  channels.push({ id: ids.flags, bits: column(b.flags, n, 1, 0), float: false });
  if (b.epsilon) channels.push({ id: ids.epsilon, bits: floatChannel(b.epsilon, n, 1, 0), float: true });
  b.extras.forEach((x, i) => {
    if (x) channels.push({ id: ids.extra(i), bits: floatChannel(x, n, 1, 0), float: true });
  });
  const byId = new Map(channels.map((l) => [l.id, l]));

  // Predictors: first each channel on its own; then state channels may integrate another state channel and
  // Q channels may follow a neighbour, provided the channel they read is itself predicted on its own.
  const rows = Math.min(n, SEARCH_ROWS);
  const scratch = new Uint32Array(rows);
  const chosen = new Map<number, Predictor>();
  for (const channel of channels) {
    const own: Predictor[] = [{ kind: Predict.Previous, ref: 0, c: 0 }];
    if (channel.float) own.push({ kind: Predict.Linear, ref: 0, c: 0 });
    chosen.set(channel.id, choose(channel, own, byId, rows, scratch));
  }
  // A channel that another reads must stay on its own, and a channel that reads is read by none.
  const standsAlone = (id: number) => !hasRef(chosen.get(id)!.kind);
  const readByOthers = new Set<number>();
  const settle = (x: Channel, better: (current: Predictor) => Predictor) => {
    if (readByOthers.has(x.id)) return;
    const p = better(chosen.get(x.id)!);
    chosen.set(x.id, p);
    if (hasRef(p.kind)) readByOthers.add(p.ref);
  };
  if (D <= MAX_SEARCH_DIMS && rows >= 3) {
    const state = channels.slice(0, D);
    for (const x of state) settle(x, (current) => bestIntegrator(x, current, state.filter((y) => y !== x && standsAlone(y.id)), byId, rows, scratch));
  }
  if (A <= MAX_SEARCH_DIMS) {
    const q = channels.slice(D, D + A);
    const beside = (x: Channel) => q.filter((y) => y !== x && standsAlone(y.id)).map((y): Predictor => ({ kind: Predict.Beside, ref: y.id, c: 0 }));
    for (const x of q) settle(x, (current) => choose(x, [current, ...beside(x)], byId, rows, scratch));
  }

  // Channels that read another come after every channel that stands alone, so a reader has y before x.
  const order: Choice[] = [];
  for (const pass of [false, true]) {
    for (const channel of channels) {
      const p = chosen.get(channel.id)!;
      if (hasRef(p.kind) !== pass) continue;
      const r = new Uint32Array(n);
      residuals(p, channel.bits, hasRef(p.kind) ? byId.get(p.ref)!.bits : null, n, r);
      order.push({ channel, p, r, k: riceParameter(r, firstValueRaw(channel.float, p.kind) ? 1 : 0) });
    }
  }

  const head = new ByteWriter();
  head.u8(PACKED_LAYOUT);
  head.varint(b.episode);
  head.varint(b.firstStep);
  head.varint(n);
  head.varint(b.weights.length);
  for (const [row, online, target] of b.weights) {
    head.varint(row);
    const tags = idTag(online, null) | (idTag(target, online) << 2);
    head.u8(tags);
    writeIdBody(head, online, tags & 3);
    writeIdBody(head, target, tags >> 2);
  }
  // Which optional channels the block has: bit 0 ε, bit 1 + i the header's extra i.
  const present = new Uint8Array(Math.ceil((1 + b.extras.length) / 8));
  const mark = (bit: number) => (present[bit >> 3] |= 1 << (bit & 7));
  if (b.epsilon) mark(0);
  b.extras.forEach((x, i) => x && mark(1 + i));
  head.raw(present);
  const byChannel = new Map(order.map((o) => [o.channel.id, o]));
  for (const channel of channels) {
    const { p, k } = byChannel.get(channel.id)!;
    head.u8(p.kind * 33 + k);
    if (hasRef(p.kind)) head.varint(p.ref);
    if (hasCoefficient(p.kind)) head.f32(p.c);
  }
  const bits = new BitWriter(n * order.length * 2 + 16);
  for (const { channel, p, r, k } of order) {
    let t = 0;
    if (firstValueRaw(channel.float, p.kind)) bits.wide(channel.bits[t++], 32);
    bits.riceChannel(r, t, n, k);
  }
  head.raw(bits.finish());
  return head.finish();
}

// ---------------------------------------------------------------- decode

/** Where a packed block sits (episode, firstStep, n): the start of its binary, for a forward scan. */
export function decodePackedPlace(bytes: Uint8Array): { episode: number; firstStep: number; n: number; reader: ByteReader } {
  const what = 'step block (packed)';
  const r = new ByteReader(bytes);
  const layout = r.u8(what);
  if (layout !== PACKED_LAYOUT) throw new Error(`${what}: layout ${layout} is unknown (this reader knows ${PACKED_LAYOUT})`);
  return { episode: r.varint(`${what}, episode`), firstStep: r.varint(`${what}, firstStep`), n: r.varint(`${what}, n`), reader: r };
}

export interface UnpackedColumns {
  episode: number;
  firstStep: number;
  n: number;
  state: Float32Array;
  q: Float32Array;
  reward: Float32Array;
  action: Uint32Array;
  flags: Uint8Array;
  epsilon: Float32Array | null;
  extras: Record<string, Float32Array>;
  weights: WeightsRun[];
}

/** Throws a plain Error naming the field; the reader adds the file and offset. */
export function decodePacked(bytes: Uint8Array, D: number, A: number, extraNames: readonly string[], maxBytes: number): UnpackedColumns {
  const what = 'step block (packed)';
  const { episode, firstStep, n, reader: r } = decodePackedPlace(bytes);
  const runs = r.varint(`${what}, weights`);
  if (runs > bytes.length) throw new Error(`${what}, weights: ${runs} runs cannot fit in ${bytes.length} bytes`);
  const weights: WeightsRun[] = [];
  for (let i = 0; i < runs; i++) {
    const where = `${what}, weights[${i}]`;
    const row = r.varint(where);
    const tags = r.u8(where);
    if (tags > 15) throw new Error(`${where}: id tags ${tags} are unknown`);
    const online = readIdBody(r, tags & 3, null, where);
    weights.push([row, online, readIdBody(r, tags >> 2, online, where)]);
  }

  const ids = channelIds(D, A);
  const present = r.raw(Math.ceil((1 + extraNames.length) / 8), `${what}, present`);
  const has = (bit: number) => (present[bit >> 3] & (1 << (bit & 7))) !== 0;
  const channelList: number[] = [];
  for (let id = 0; id < ids.epsilon; id++) channelList.push(id);
  if (has(0)) channelList.push(ids.epsilon);
  extraNames.forEach((_, i) => has(1 + i) && channelList.push(ids.extra(i)));
  // Every channel is n values of 4 bytes once decoded; refuse what could not fit in a file of this size.
  if (n * channelList.length * 4 > maxBytes) throw new Error(`${what}: ${n} rows of ${channelList.length} channels need more memory than allowed (${maxBytes} bytes)`);

  interface Entry {
    id: number;
    p: Predictor;
    k: number;
    float: boolean;
  }
  const entries: Entry[] = channelList.map((id) => {
    const where = `${what}, channel ${id}`;
    const code = r.u8(where);
    const kind = Math.floor(code / 33) as Predict;
    const k = code % 33;
    if (kind >= PREDICT_KINDS) throw new Error(`${where}: predictor ${kind} is unknown`);
    const float = id !== ids.action && id !== ids.flags;
    if (!float && kind !== Predict.Previous) throw new Error(`${where}: an integer channel is predicted only by its previous value`);
    const ref = hasRef(kind) ? r.varint(where) : 0;
    const c = hasCoefficient(kind) ? r.f32(where) : 0;
    return { id, p: { kind, ref, c }, k, float };
  });
  const byId = new Map(entries.map((e) => [e.id, e]));
  for (const e of entries) {
    if (!hasRef(e.p.kind)) continue;
    const y = byId.get(e.p.ref);
    if (!y || !y.float || hasRef(y.p.kind)) throw new Error(`${what}, channel ${e.id}: refers to channel ${e.p.ref}, which is not a float channel of this block predicted on its own`);
  }

  const bits = new BitReader(bytes, r.pos);
  const channels = new Map<number, Uint32Array>();
  const res = new Uint32Array(n);
  const decodeChannel = ({ id, p, k, float }: Entry) => {
    const raw = firstValueRaw(float, p.kind) && n > 0;
    try {
      let t = 0;
      if (raw) res[t++] = bits.wide(32);
      bits.riceChannel(res, t, n - t, k);
    } catch (e) {
      throw new Error(`${what}, channel ${id}: ${(e as Error).message}`);
    }
    // A first value written whole is its own pattern: the residual against a prediction of 0.
    if (raw) res[0] = zigzagOfPattern(res[0]);
    const x = new Uint32Array(n);
    reconstruct(p, res, hasRef(p.kind) ? channels.get(p.ref)! : null, x);
    channels.set(id, x);
  };
  for (const e of entries) if (!hasRef(e.p.kind)) decodeChannel(e);
  for (const e of entries) if (hasRef(e.p.kind)) decodeChannel(e);

  const interleave = (first: number, width: number) => {
    const out = new Float32Array(n * width);
    const u = new Uint32Array(out.buffer);
    for (let j = 0; j < width; j++) {
      const channel = channels.get(first + j)!;
      for (let t = 0; t < n; t++) u[t * width + j] = channel[t];
    }
    return out;
  };
  const f32 = (id: number) => new Float32Array(channels.get(id)!.buffer);
  const flagChannel = channels.get(ids.flags)!;
  const flags = new Uint8Array(n);
  for (let t = 0; t < n; t++) {
    if (flagChannel[t] > 0xff) throw new Error(`${what}: flags[${t}] is ${flagChannel[t]}, more than a byte`);
    flags[t] = flagChannel[t];
  }
  const extras: Record<string, Float32Array> = {};
  extraNames.forEach((name, i) => {
    if (channels.has(ids.extra(i))) extras[name] = f32(ids.extra(i));
  });
  return {
    episode,
    firstStep,
    n,
    state: interleave(0, D),
    q: interleave(D, A),
    reward: f32(ids.reward),
    action: channels.get(ids.action)!,
    flags,
    epsilon: channels.has(ids.epsilon) ? f32(ids.epsilon) : null,
    extras,
    weights,
  };
}

/**
 * Opens a step file. A closed file is opened through its trailer and index (two reads, whatever the
 * file's size). A file without a usable index (the recorder was killed, or the tail is damaged) is
 * opened by a forward scan that keeps every whole record and says exactly what it dropped and why:
 * "cut short" when the file simply ends inside a record, "corrupt" when a record is there but wrong.
 * Every record is CRC-checked when read, and no length field is trusted past the file's end.
 */
import { crc32 } from './crc32.ts';
import { Sha256 } from './sha256.ts';
import { StepFileError } from './errors.ts';
import { FRAME_OVERHEAD, KIND_NAMES, Kind, MAGIC, TRAILER_PAYLOAD, TRAILER_SIZE, readU64 } from './frame.ts';
import { decodeIndex, type BlockRef, type EndRef, type RecordRef, type RecordTables, type SnapshotRef } from './index-record.ts';
import {
  decodeBlock,
  decodeBlockPlace,
  decodeEpisodeEnd,
  decodeHeader,
  decodeNote,
  decodeSnapshot,
  decodeSnapshotMeta,
} from './records.ts';
import type { ByteSource } from './source.ts';
import type { EpisodeEnd, Header, Note, Snapshot, StepColumns, WeightsRun } from './types.ts';

/** One thing the reader left out, with where and why. */
export interface Dropped {
  problem: 'cut-short' | 'corrupt';
  /** Byte offset of the record (or of the partial frame) concerned. */
  offset: number;
  /** Position of the record in the file, counting the header as record 0. */
  record: number;
  /** The record's kind when its frame could be read. */
  kind: string | null;
  /** Bytes of the file that this leaves unread. */
  bytes: number;
  detail: string;
}

export interface Recovery {
  /** Opened through the index (a file closed properly). */
  indexed: boolean;
  /** Why the index could not be used, when the file has one that is damaged. */
  indexProblem: string | null;
  /** Whole records kept. */
  records: number;
  dropped: Dropped[];
}

export interface EpisodeInfo {
  episode: number;
  /** Steps present in the file. */
  length: number;
  /** Indices into `blocks`, in step order. */
  blocks: number[];
  end: EpisodeEnd | null;
  /** Steps whose block was dropped as damaged (the episode has holes). */
  missingSteps: number;
}

/**
 * An episode's steps gathered into one set of columns. The arrays may share memory with the file's
 * bytes (they are views where the stored bytes are aligned): read them, copy before writing.
 */
export interface EpisodeSteps {
  episode: number;
  n: number;
  /** Step index within the episode of each row (contiguous unless a damaged block was dropped). */
  step: Uint32Array;
  state: Float32Array;
  action: Uint32Array;
  reward: Float32Array;
  flags: Uint8Array;
  q: Float32Array;
  epsilon: Float32Array | null;
  extras: Record<string, Float32Array>;
  /** Weights in force, each run starting at a row of this episode. */
  weights: WeightsRun[];
  end: EpisodeEnd | null;
}

const MAX_PAYLOAD = 0xffffffff;

export class StepFile {
  readonly episodes: EpisodeInfo[];
  readonly notes: Note[];
  private readonly byEpisode = new Map<number, EpisodeInfo>();

  constructor(
    readonly name: string,
    private readonly source: ByteSource,
    readonly header: Header,
    private readonly tables: RecordTables,
    ends: EpisodeEnd[],
    notes: Note[],
    readonly recovery: Recovery,
  ) {
    this.notes = notes;
    this.episodes = buildEpisodes(tables.blocks, ends);
    for (const e of this.episodes) this.byEpisode.set(e.episode, e);
  }

  get size(): number {
    return this.source.size;
  }
  close(): void {
    this.source.close?.();
  }

  /** SHA-256 of the whole file, read in 1 MiB pieces: names a clip's source exactly. */
  sha256(): string {
    const h = new Sha256();
    for (let at = 0; at < this.source.size; at += 1 << 20) h.update(this.source.read(at, Math.min(1 << 20, this.source.size - at)));
    return Array.from(h.digest(), (x) => x.toString(16).padStart(2, '0')).join('');
  }
  get blocks(): readonly BlockRef[] {
    return this.tables.blocks;
  }
  get snapshots(): readonly SnapshotRef[] {
    return this.tables.snapshots;
  }
  get totalSteps(): number {
    let n = 0;
    for (const b of this.tables.blocks) n += b.n;
    return n;
  }
  /** True when the file was not closed properly or records were dropped. */
  get damaged(): boolean {
    return !this.recovery.indexed || this.recovery.dropped.length > 0;
  }

  episode(episode: number): EpisodeInfo {
    const e = this.byEpisode.get(episode);
    if (!e) {
      const known = this.episodes.length ? `${this.episodes[0].episode}..${this.episodes[this.episodes.length - 1].episode}` : 'none';
      throw new StepFileError('not-found', this.name, null, `no episode ${episode} (episodes in the file: ${known})`);
    }
    return e;
  }

  readBlock(i: number): StepColumns {
    const ref = this.tables.blocks[i];
    if (!ref) throw new StepFileError('not-found', this.name, null, `no step block ${i} (the file has ${this.tables.blocks.length})`);
    const payload = this.payload(ref, Kind.StepBlock);
    return this.decode(ref, 'step block', () => decodeBlock(payload, this.header, this.source.size * 1100));
  }

  readEpisode(episode: number): EpisodeSteps {
    const info = this.episode(episode);
    const blocks = info.blocks.map((bi) => this.readBlock(bi));
    // Most episodes fit one block: hand its freshly decoded arrays over rather than copy them again.
    if (blocks.length === 1 && this.header.extras.every((x) => x in blocks[0].extras)) {
      const b = blocks[0];
      const step = new Uint32Array(b.n);
      for (let i = 0; i < b.n; i++) step[i] = b.firstStep + i;
      const { n, state, action, reward, flags, q, epsilon, extras, weights } = b;
      return { episode, n, step, state, action, reward, flags, q, epsilon, extras, weights, end: info.end };
    }
    const D = this.header.stateDims.length;
    const A = this.header.actions.length;
    const n = info.length;
    const out: EpisodeSteps = {
      episode,
      n,
      step: new Uint32Array(n),
      state: new Float32Array(n * D),
      action: new Uint32Array(n),
      reward: new Float32Array(n),
      flags: new Uint8Array(n),
      q: new Float32Array(n * A),
      epsilon: null,
      extras: Object.fromEntries(this.header.extras.map((x) => [x, new Float32Array(n).fill(NaN)])),
      weights: [],
      end: info.end,
    };
    let row = 0;
    for (const b of blocks) {
      for (let i = 0; i < b.n; i++) out.step[row + i] = b.firstStep + i;
      out.state.set(b.state, row * D);
      out.action.set(b.action, row);
      out.reward.set(b.reward, row);
      out.flags.set(b.flags, row);
      out.q.set(b.q, row * A);
      if (b.epsilon) {
        if (!out.epsilon) out.epsilon = new Float32Array(n).fill(NaN);
        out.epsilon.set(b.epsilon, row);
      }
      for (const [name, col] of Object.entries(b.extras)) out.extras[name]?.set(col, row);
      for (const [r, online, target] of b.weights) {
        const last = out.weights[out.weights.length - 1];
        if (!last || last[1] !== online || last[2] !== target) out.weights.push([row + r, online, target]);
      }
      row += b.n;
    }
    return out;
  }

  readSnapshot(ref: SnapshotRef): Snapshot {
    const payload = this.payload(ref, Kind.Snapshot);
    const snap = this.decode(ref, 'snapshot', () => decodeSnapshot(payload, this.source.size * 1100));
    if (ref.hasLayers) return snap;
    const carrier = this.tables.snapshots.find((s) => s.id === ref.id && s.hasLayers);
    if (!carrier) throw new StepFileError('not-found', this.name, ref.offset, `snapshot ${ref.id} leaves its weights to an earlier record with the same id, and there is none`);
    return { ...snap, layers: this.readSnapshot(carrier).layers };
  }

  /** The snapshot with this id (any role), or null. */
  snapshotById(id: string): SnapshotRef | null {
    return this.tables.snapshots.find((s) => s.id === id) ?? null;
  }

  /** Read one record's payload, checking its frame against what the index or scan said. */
  private payload(ref: RecordRef, kind: Kind): Uint8Array {
    const total = FRAME_OVERHEAD + ref.length;
    if (ref.offset + total > this.source.size) {
      throw new StepFileError('cut-short', this.name, ref.offset, `${KIND_NAMES[kind]} record needs ${total} bytes, the file ends after ${this.source.size - ref.offset}`);
    }
    const bytes = this.source.read(ref.offset, total);
    const check = checkFrame(bytes, 0);
    if (check.length !== ref.length || check.kind !== kind) {
      throw new StepFileError('corrupt', this.name, ref.offset, `expected a ${KIND_NAMES[kind]} record of ${ref.length} bytes, the frame says ${KIND_NAMES[check.kind] ?? `kind ${check.kind}`} of ${check.length} bytes`);
    }
    if (!check.crcOk) {
      throw new StepFileError('corrupt', this.name, ref.offset, `${KIND_NAMES[kind]} record fails its CRC (stored ${hex(check.storedCrc)}, computed ${hex(check.crc)})`);
    }
    return bytes.subarray(5, 5 + ref.length);
  }

  private decode<T>(ref: RecordRef, what: string, f: () => T): T {
    try {
      return f();
    } catch (e) {
      if (e instanceof StepFileError) throw e;
      throw new StepFileError('corrupt', this.name, ref.offset, `${what} record: ${(e as Error).message}`);
    }
  }
}

interface FrameCheck {
  length: number;
  kind: number;
  storedCrc: number;
  crc: number;
  crcOk: boolean;
}

/** Check the frame at `at` in `bytes`, which must hold the whole record. */
function checkFrame(bytes: Uint8Array, at: number): FrameCheck {
  const dv = new DataView(bytes.buffer, bytes.byteOffset, bytes.byteLength);
  const length = dv.getUint32(at, true);
  const kind = bytes[at + 4];
  if (at + FRAME_OVERHEAD + length > bytes.length) return { length, kind, storedCrc: 0, crc: 0, crcOk: false };
  const storedCrc = dv.getUint32(at + 5 + length, true);
  const crc = crc32(bytes.subarray(at + 4, at + 5 + length));
  return { length, kind, storedCrc, crc, crcOk: crc === storedCrc };
}

const hex = (x: number) => `0x${x.toString(16).toUpperCase().padStart(8, '0')}`;

function buildEpisodes(blocks: BlockRef[], ends: EpisodeEnd[]): EpisodeInfo[] {
  const map = new Map<number, EpisodeInfo>();
  const get = (episode: number) => {
    let e = map.get(episode);
    if (!e) map.set(episode, (e = { episode, length: 0, blocks: [], end: null, missingSteps: 0 }));
    return e;
  };
  blocks.forEach((b, i) => {
    const e = get(b.episode);
    e.blocks.push(i);
    e.length += b.n;
  });
  for (const end of ends) get(end.episode).end = end;
  for (const e of map.values()) {
    e.blocks.sort((a, b) => blocks[a].firstStep - blocks[b].firstStep);
    let expected = 0;
    for (const bi of e.blocks) {
      e.missingSteps += Math.max(0, blocks[bi].firstStep - expected);
      expected = blocks[bi].firstStep + blocks[bi].n;
    }
    if (e.end) e.missingSteps += Math.max(0, e.end.length - expected);
  }
  return [...map.values()].sort((a, b) => a.episode - b.episode);
}

// ------------------------------------------------------------------ opening

export function openStepFile(source: ByteSource, name: string): StepFile {
  const size = source.size;
  if (size < MAGIC.length) {
    const head = source.read(0, size);
    const isPrefix = head.every((b, i) => b === MAGIC[i]);
    if (isPrefix) throw new StepFileError('cut-short', name, 0, `the file holds only ${size} bytes, not even the 8-byte signature`);
    throw new StepFileError('not-a-step-file', name, 0, 'does not start with the step-file signature "EPISCOPE"');
  }
  const magic = source.read(0, MAGIC.length);
  if (!magic.every((b, i) => b === MAGIC[i])) {
    throw new StepFileError('not-a-step-file', name, 0, 'does not start with the step-file signature "EPISCOPE"');
  }
  const viaIndex = tryIndex(source, name);
  if (viaIndex.file) return viaIndex.file;
  return scan(source, name, viaIndex.problem);
}

function tryIndex(source: ByteSource, name: string): { file?: StepFile; problem: string | null } {
  const size = source.size;
  if (size < MAGIC.length + 2 * FRAME_OVERHEAD + TRAILER_SIZE) return { problem: null };
  const tail = source.read(size - TRAILER_SIZE, TRAILER_SIZE);
  const t = checkFrame(tail, 0);
  // No trailer at all is the normal state of a file whose recorder was killed: not a problem to report.
  if (t.kind !== Kind.Trailer || t.length !== TRAILER_PAYLOAD) return { problem: null };
  if (!t.crcOk) return { problem: `the trailer at byte ${size - TRAILER_SIZE} fails its CRC` };
  const indexOffset = readU64(tail, 5);
  if (indexOffset < MAGIC.length || indexOffset + FRAME_OVERHEAD > size - TRAILER_SIZE) {
    return { problem: `the trailer points at byte ${indexOffset}, outside the file` };
  }
  const lengthBytes = source.read(indexOffset, 4);
  // A view at the bytes' own offset: a Node Buffer's slice() is a view of a larger pool, not a copy.
  const indexLength = new DataView(lengthBytes.buffer, lengthBytes.byteOffset, 4).getUint32(0, true);
  if (indexOffset + FRAME_OVERHEAD + indexLength !== size - TRAILER_SIZE) {
    return { problem: `the index record at byte ${indexOffset} does not end where the trailer begins` };
  }
  const indexBytes = source.read(indexOffset, FRAME_OVERHEAD + indexLength);
  const ic = checkFrame(indexBytes, 0);
  if (ic.kind !== Kind.Index) return { problem: `the trailer points at byte ${indexOffset}, which is not an index record` };
  if (!ic.crcOk) return { problem: `the index record at byte ${indexOffset} fails its CRC` };
  let tables: RecordTables;
  try {
    tables = decodeIndex(indexBytes.subarray(5, 5 + indexLength), size * 1100);
    for (const r of [tables.header, ...tables.blocks, ...tables.ends, ...tables.snapshots, ...tables.notes]) {
      if (r.offset < MAGIC.length || r.offset + FRAME_OVERHEAD + r.length > indexOffset) throw new Error(`a record at byte ${r.offset} lies outside the file`);
    }
  } catch (e) {
    return { problem: `the index record at byte ${indexOffset} is damaged: ${(e as Error).message}` };
  }
  // The index is trusted for places only; every record it points at is still CRC-checked on read.
  let header: Header;
  const payloadOf = (ref: RecordRef, kind: Kind) => {
    const bytes = source.read(ref.offset, FRAME_OVERHEAD + ref.length);
    const c = checkFrame(bytes, 0);
    if (c.kind !== kind || c.length !== ref.length || !c.crcOk) throw new Error(`the ${KIND_NAMES[kind]} record at byte ${ref.offset} does not match the index or fails its CRC`);
    return bytes.subarray(5, 5 + ref.length);
  };
  let ends: EpisodeEnd[];
  let notes: Note[];
  try {
    header = decodeHeader(payloadOf(tables.header, Kind.Header));
    ends = tables.ends.map((r) => decodeEpisodeEnd(payloadOf(r, Kind.EpisodeEnd), header, size * 1100));
    notes = tables.notes.map((r) => decodeNote(payloadOf(r, Kind.Note)));
  } catch (e) {
    // A damaged record behind a good index: the scan reports exactly which one (or refuses a bad header).
    return { problem: (e as Error).message };
  }
  const records = 3 + tables.blocks.length + tables.ends.length + tables.snapshots.length + tables.notes.length;
  return { file: new StepFile(name, source, header, tables, ends, notes, { indexed: true, indexProblem: null, records, dropped: [] }), problem: null };
}

function headerError(e: unknown, name: string, offset: number): StepFileError {
  if (e instanceof StepFileError) return e;
  const unsupported = (e as { unsupported?: boolean }).unsupported === true;
  return new StepFileError(unsupported ? 'unsupported' : 'corrupt', name, offset, `header record: ${(e as Error).message}`);
}

function scan(source: ByteSource, name: string, indexProblem: string | null): StepFile {
  const size = source.size;
  const bytes = source.read(0, size);
  const dv = new DataView(bytes.buffer, bytes.byteOffset, bytes.byteLength);
  const tables: RecordTables = { header: { offset: 0, length: 0 }, blocks: [], ends: [], snapshots: [], notes: [] };
  const ends: EpisodeEnd[] = [];
  const notes: Note[] = [];
  const dropped: Dropped[] = [];
  let header: Header | null = null;
  let pos = MAGIC.length;
  let record = 0;
  let kept = 0;

  while (pos < size) {
    if (size - pos < FRAME_OVERHEAD) {
      dropped.push({ problem: 'cut-short', offset: pos, record, kind: null, bytes: size - pos, detail: `the file ends ${size - pos} bytes into record ${record}'s ${FRAME_OVERHEAD}-byte frame` });
      break;
    }
    const length = dv.getUint32(pos, true);
    const kind = bytes[pos + 4];
    const kindName = KIND_NAMES[kind] ?? null;
    if (!kindName) {
      dropped.push({ problem: 'corrupt', offset: pos, record, kind: null, bytes: size - pos, detail: `record ${record} has unknown kind ${kind} (expected 1–7); the rest of the file cannot be framed` });
      break;
    }
    if (length > MAX_PAYLOAD || pos + FRAME_OVERHEAD + length > size) {
      dropped.push({
        problem: 'cut-short',
        offset: pos,
        record,
        kind: kindName,
        bytes: size - pos,
        detail: `${kindName} record ${record} needs ${FRAME_OVERHEAD + length} bytes, the file ends after ${size - pos} (a recorder stopped mid-write, or the length field is damaged)`,
      });
      break;
    }
    const c = checkFrame(bytes, pos);
    const ref: RecordRef = { offset: pos, length };
    const next = pos + FRAME_OVERHEAD + length;
    if (!c.crcOk) {
      dropped.push({ problem: 'corrupt', offset: pos, record, kind: kindName, bytes: next - pos, detail: `${kindName} record ${record} fails its CRC (stored ${hex(c.storedCrc)}, computed ${hex(c.crc)})` });
      if (record === 0) throw new StepFileError('corrupt', name, pos, `the header record fails its CRC (stored ${hex(c.storedCrc)}, computed ${hex(c.crc)}); nothing can be read without it`);
    } else {
      const payload = bytes.subarray(pos + 5, pos + 5 + length);
      try {
        if (record === 0) {
          if (kind !== Kind.Header) throw new StepFileError('corrupt', name, pos, `the first record is a ${kindName}, expected the header`);
          header = decodeHeader(payload);
          tables.header = ref;
        } else if (!header) {
          throw new Error('unreachable: header is read first');
        } else if (kind === Kind.StepBlock) {
          const place = decodeBlockPlace(payload);
          tables.blocks.push({ ...ref, ...place });
        } else if (kind === Kind.EpisodeEnd) {
          const end = decodeEpisodeEnd(payload, header, size * 1100);
          ends.push(end);
          tables.ends.push({ ...ref, episode: end.episode } satisfies EndRef);
        } else if (kind === Kind.Snapshot) {
          tables.snapshots.push({ ...ref, ...decodeSnapshotMeta(payload) });
        } else if (kind === Kind.Note) {
          notes.push(decodeNote(payload));
          tables.notes.push(ref);
        } else if (kind === Kind.Header) {
          throw new Error('a second header record');
        }
        // Index and trailer records are whole records too; their content is rebuilt by the scan itself.
        kept++;
      } catch (e) {
        if (record === 0) throw headerError(e, name, pos);
        dropped.push({ problem: 'corrupt', offset: pos, record, kind: kindName, bytes: next - pos, detail: `${kindName} record ${record}: ${(e as Error).message}` });
      }
    }
    pos = next;
    record++;
  }
  if (!header) throw new StepFileError('cut-short', name, MAGIC.length, 'the file ends inside its header record; nothing can be read without it');
  return new StepFile(name, source, header, tables, ends, notes, { indexed: false, indexProblem, records: kept, dropped });
}

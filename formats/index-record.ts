/**
 * The index record: where every record is, so a reader opens a closed file with two reads and
 * seeks to any block or episode without scanning. Tables are columnar arrays like the step blocks.
 */
import { decodeArray, encodeArray } from './columns.ts';
import { pack, unpack, type SnapshotMeta } from './records.ts';

export interface RecordRef {
  /** Offset of the record's frame (its length field). */
  offset: number;
  /** Payload length in bytes. */
  length: number;
}

export interface BlockRef extends RecordRef {
  episode: number;
  firstStep: number;
  n: number;
}

export interface SnapshotRef extends RecordRef, SnapshotMeta {}

export interface EndRef extends RecordRef {
  episode: number;
}

export interface RecordTables {
  header: RecordRef;
  blocks: BlockRef[];
  ends: EndRef[];
  snapshots: SnapshotRef[];
  notes: RecordRef[];
}

function refs(list: RecordRef[]) {
  return {
    offset: encodeArray(Float64Array.from(list, (r) => r.offset), [list.length]),
    length: encodeArray(Uint32Array.from(list, (r) => r.length), [list.length]),
  };
}

export function encodeIndex(t: RecordTables): Uint8Array {
  return pack({
    header: { offset: t.header.offset, length: t.header.length },
    blocks: {
      ...refs(t.blocks),
      episode: encodeArray(Uint32Array.from(t.blocks, (b) => b.episode), [t.blocks.length]),
      firstStep: encodeArray(Uint32Array.from(t.blocks, (b) => b.firstStep), [t.blocks.length]),
      n: encodeArray(Uint32Array.from(t.blocks, (b) => b.n), [t.blocks.length]),
    },
    ends: { ...refs(t.ends), episode: encodeArray(Uint32Array.from(t.ends, (e) => e.episode), [t.ends.length]) },
    snapshots: { ...refs(t.snapshots), meta: t.snapshots.map((s) => ({ role: s.role, id: s.id, trainingStep: s.trainingStep, hasLayers: s.hasLayers })) },
    notes: refs(t.notes),
  });
}

type Obj = Record<string, unknown>;

function table(o: unknown, what: string, maxBytes: number, columns: string[]): Record<string, ArrayLike<number>> & { count: number } {
  if (typeof o !== 'object' || o === null) throw new Error(`index.${what}: expected a map`);
  const m = o as Obj;
  const out: Record<string, ArrayLike<number>> = {};
  let count = -1;
  for (const c of ['offset', 'length', ...columns]) {
    const a = decodeArray(m[c], `index.${what}.${c}`, maxBytes);
    if (count >= 0 && a.length !== count) throw new Error(`index.${what}.${c}: holds ${a.length} entries, expected ${count}`);
    count = a.length;
    out[c] = a;
  }
  return Object.assign(out, { count: Math.max(count, 0) });
}

export function decodeIndex(bytes: Uint8Array, maxBytes: number): RecordTables {
  const o = unpack(bytes) as Obj;
  if (typeof o !== 'object' || o === null) throw new Error('index: expected a map');
  const h = o.header as Obj;
  if (typeof h !== 'object' || h === null || typeof h.offset !== 'number' || typeof h.length !== 'number') {
    throw new Error('index.header: expected {offset, length}');
  }
  const b = table(o.blocks, 'blocks', maxBytes, ['episode', 'firstStep', 'n']);
  const e = table(o.ends, 'ends', maxBytes, ['episode']);
  const s = table(o.snapshots, 'snapshots', maxBytes, []);
  const n = table(o.notes, 'notes', maxBytes, []);
  const meta = (o.snapshots as Obj).meta;
  if (!Array.isArray(meta) || meta.length !== s.count) throw new Error(`index.snapshots.meta: expected ${s.count} entries`);
  return {
    header: { offset: h.offset, length: h.length },
    blocks: Array.from({ length: b.count }, (_, i) => ({
      offset: b.offset[i], length: b.length[i], episode: b.episode[i], firstStep: b.firstStep[i], n: b.n[i],
    })),
    ends: Array.from({ length: e.count }, (_, i) => ({ offset: e.offset[i], length: e.length[i], episode: e.episode[i] })),
    snapshots: meta.map((m: Obj, i: number) => {
      if (typeof m !== 'object' || m === null || (m.role !== 'online' && m.role !== 'target') || typeof m.id !== 'string' || typeof m.trainingStep !== 'number' || typeof m.hasLayers !== 'boolean') {
        throw new Error(`index.snapshots.meta[${i}]: expected {role, id, trainingStep, hasLayers}`);
      }
      return { offset: s.offset[i], length: s.length[i], role: m.role, id: m.id, trainingStep: m.trainingStep, hasLayers: m.hasLayers };
    }),
    notes: Array.from({ length: n.count }, (_, i) => ({ offset: n.offset[i], length: n.length[i] })),
  };
}

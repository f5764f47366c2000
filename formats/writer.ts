/**
 * Appends framed records to a byte sink and remembers where each one went, so that `finish()`
 * can write the index and trailer. Knows nothing of validation or buffering: that is the recorder's job.
 */
import { FRAME_OVERHEAD, Kind, MAGIC, frame, trailerPayload } from './frame.ts';
import type { BlockRef, EndRef, RecordRef, RecordTables, SnapshotRef } from './index-record.ts';
import { encodeIndex } from './index-record.ts';
import {
  encodeBlock,
  encodeEpisodeEnd,
  encodeHeader,
  encodeNote,
  encodeSnapshot,
  type BlockToEncode,
} from './records.ts';
import { FORMAT_VERSION, PLAIN_FORMAT_VERSION, type EpisodeEnd, type Header, type Note, type Snapshot } from './types.ts';

/** Where bytes go. `write` must take the bytes whole or throw. */
export interface ByteSink {
  write(bytes: Uint8Array): void;
  close(): void;
}

export class StepFileWriter {
  private offset = 0;
  private readonly tables: RecordTables = {
    header: { offset: 0, length: 0 },
    blocks: [],
    ends: [],
    snapshots: [],
    notes: [],
  };

  readonly header: Header;

  /** `compress`: write packed step blocks (SPEC.md §5.2). The header's version says which form follows. */
  constructor(
    private readonly sink: ByteSink,
    header: Header,
    private readonly compress: boolean,
  ) {
    this.header = { ...header, version: compress ? FORMAT_VERSION : PLAIN_FORMAT_VERSION };
    this.sink.write(MAGIC);
    this.offset = MAGIC.length;
    this.tables.header = this.append(Kind.Header, encodeHeader(this.header));
  }

  get bytesWritten(): number {
    return this.offset;
  }

  writeBlock(block: BlockToEncode): BlockRef {
    const payload = encodeBlock(block, this.header, this.compress);
    const ref = { ...this.append(Kind.StepBlock, payload), episode: block.episode, firstStep: block.firstStep, n: block.n };
    this.tables.blocks.push(ref);
    return ref;
  }

  writeEpisodeEnd(end: EpisodeEnd): EndRef {
    const ref = { ...this.append(Kind.EpisodeEnd, encodeEpisodeEnd(end)), episode: end.episode };
    this.tables.ends.push(ref);
    return ref;
  }

  /** Weights already in the file under the same id are not written twice. */
  writeSnapshot(s: Snapshot): SnapshotRef {
    const hasLayers = !this.tables.snapshots.some((r) => r.id === s.id && r.hasLayers);
    const ref = { ...this.append(Kind.Snapshot, encodeSnapshot(s, hasLayers)), role: s.role, id: s.id, trainingStep: s.trainingStep, hasLayers };
    this.tables.snapshots.push(ref);
    return ref;
  }

  writeNote(n: Note): RecordRef {
    const ref = this.append(Kind.Note, encodeNote(n));
    this.tables.notes.push(ref);
    return ref;
  }

  /** Index, then trailer; the file is complete after this. */
  finish(): void {
    const indexRef = this.append(Kind.Index, encodeIndex(this.tables));
    this.append(Kind.Trailer, trailerPayload(indexRef.offset));
    this.sink.close();
  }

  private append(kind: Kind, payload: Uint8Array): RecordRef {
    const bytes = frame(kind, payload);
    this.sink.write(bytes);
    const ref = { offset: this.offset, length: payload.length };
    this.offset += FRAME_OVERHEAD + payload.length;
    return ref;
  }
}

export * from './types.ts';
export { StepFileError, type StepFileProblem } from './errors.ts';
export { openStepFile, StepFile, type Dropped, type EpisodeInfo, type EpisodeSteps, type Recovery } from './reader.ts';
export { bytesSource, type ByteSource } from './source.ts';
export { StepFileWriter, type ByteSink } from './writer.ts';
export type { BlockRef, SnapshotRef, RecordRef } from './index-record.ts';
export { crc32 } from './crc32.ts';
export { snapshotId } from './snapshot-id.ts';

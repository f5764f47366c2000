export { createRecorder, type RecorderHeader, type RecorderOptions } from './recorder.ts';
export { MemorySink } from './memory-sink.ts';
export { RecordError } from './errors.ts';
export type * from './types.ts';

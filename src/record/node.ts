/** Node-only entry: recording straight to a file. */
import { createRecorder, type RecorderHeader, type RecorderOptions } from './recorder.ts';
import { FileSink, type FileSinkOptions } from './file-sink.ts';
import type { Recorder } from './types.ts';

export { FileSink, type FileSinkOptions };

export function recordToFile(path: string, header: RecorderHeader, options: RecorderOptions & FileSinkOptions = {}): Recorder {
  return createRecorder(new FileSink(path, options), header, options);
}

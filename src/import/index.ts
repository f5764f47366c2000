/** Importing logs and model folders into step files (Node only: it reads and writes files). */
export { importLog, logFormat, DEFAULT_GAMMA, type ImportOptions, type ImportResult, type LogFormat, type SkippedLines } from './importer.ts';
export { importSnapshot, type SnapshotImportOptions, type SnapshotImportResult } from './snapshot.ts';
export { ImportError, FieldProblem } from './errors.ts';
export { parseJsonStep } from './jsonl-row.ts';
export { csvLayout, parseCsvStep } from './csv-row.ts';
export { CsvSplitter, type CsvRecord } from './csv.ts';
export { LineSplitter } from './lines.ts';
export { partialPath } from './output.ts';
export type { StepRow, LineShape } from './fields.ts';

/**
 * Choosing one snapshot record of a step file by role, id (or id prefix) and training step. Pure:
 * it reads only the file's index, never the weights.
 */
import type { SnapshotRef } from '../../formats/index-record.ts';
import type { StepFile } from '../../formats/reader.ts';
import type { SnapshotRole } from '../../formats/types.ts';

export interface SnapshotQuery {
  role?: SnapshotRole;
  /** A whole id or a prefix of one. */
  id?: string;
  atOrBeforeStep?: number;
}

/** Shortest id prefix a SNAP argument may give: 65,536 values, few enough clashes to be useful. */
export const MIN_ID_PREFIX = 4;

/**
 * The last snapshot record (greatest training step, then latest in the file) that matches every
 * part of `query`, or null when none does. Throws when `query.id` is a prefix of more than one id,
 * because then no single answer is right.
 */
export function pickSnapshot(file: StepFile, query: SnapshotQuery = {}): SnapshotRef | null {
  let candidates: readonly SnapshotRef[] = file.snapshots;
  if (query.id !== undefined) {
    const clash = idClash(file, query.id);
    if (clash) throw new Error(`${file.name}: ${clash}`);
    const prefix = query.id.toLowerCase();
    candidates = candidates.filter((s) => s.id.startsWith(prefix));
  }
  if (query.role !== undefined) candidates = candidates.filter((s) => s.role === query.role);
  const limit = query.atOrBeforeStep;
  if (limit !== undefined) candidates = candidates.filter((s) => s.trainingStep <= limit);
  let best: SnapshotRef | null = null;
  for (const s of candidates) if (!best || s.trainingStep >= best.trainingStep) best = s;
  return best;
}

/** Why `prefix` cannot name one snapshot (it starts more than one id), or null when it can. */
export function idClash(file: StepFile, prefix: string): string | null {
  const lower = prefix.toLowerCase();
  const ids = [...new Set(file.snapshots.filter((s) => s.id.startsWith(lower)).map((s) => s.id))];
  if (ids.length < 2) return null;
  return `id prefix "${prefix}" matches ${ids.length} snapshot ids (${ids.slice(0, 5).join(', ')}${ids.length > 5 ? ', …' : ''}); give more digits`;
}

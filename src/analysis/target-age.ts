/**
 * Which target weights were in force at each step, and how often they changed. From the step
 * blocks' weights runs alone, so it works for syncs whose weights were never stored.
 */
import type { StepFile } from '../../formats/reader.ts';

export interface TargetChange {
  episode: number;
  step: number;
  /** Training steps recorded before this one, in file order (evaluation steps do no updates, so they do not count). */
  fileStep: number;
  targetId: string;
}

export interface SyncCadence {
  changes: TargetChange[];
  /** Steps between successive target changes. */
  intervals: number[];
  median: number | null;
  min: number | null;
  max: number | null;
  /** Among the intervals after the first (which includes the warm-up before learning starts), the longest is more than twice the shortest. */
  irregular: boolean;
}

/** Per episode: training steps since the target weights last changed, counted over the whole file. */
export interface TargetTimeline {
  cadence: SyncCadence;
  age: Map<number, Uint32Array>;
}

export function targetTimeline(file: StepFile): TargetTimeline {
  const changes: TargetChange[] = [];
  const age = new Map<number, Uint32Array>();
  let current: string | null = null;
  let fileStep = 0;
  let lastChange = 0;
  for (const info of file.episodes) {
    const ages = new Uint32Array(info.length);
    const counts = info.end?.mode !== 'eval';
    let row = 0;
    for (const bi of info.blocks) {
      const b = file.readBlock(bi);
      const runs = b.weights;
      let r = 0;
      for (let i = 0; i < b.n; i++) {
        while (r < runs.length && runs[r][0] <= i) {
          const id = runs[r][2];
          if (id !== current) {
            current = id;
            lastChange = fileStep + (counts ? i : 0);
            // Steps before any target was recorded ('' in force) are not a change of weights.
            if (id !== '') changes.push({ episode: info.episode, step: b.firstStep + i, fileStep: lastChange, targetId: id });
          }
          r++;
        }
        ages[row + i] = fileStep + (counts ? i : 0) - lastChange;
      }
      row += b.n;
      if (counts) fileStep += b.n;
    }
    age.set(info.episode, ages);
  }
  const intervals = changes.slice(1).map((c, i) => c.fileStep - changes[i].fileStep);
  const sorted = [...intervals].sort((a, b) => a - b);
  const median = sorted.length ? sorted[Math.floor((sorted.length - 1) / 2)] : null;
  const min = sorted.length ? sorted[0] : null;
  const max = sorted.length ? sorted[sorted.length - 1] : null;
  const steady = intervals.slice(1);
  const irregular = steady.length >= 2 && Math.max(...steady) > 2 * Math.min(...steady);
  return { cadence: { changes, intervals, median, min, max, irregular }, age };
}

/**
 * Training health across snapshots: the average of max_a Q over a fixed held-out set of states for
 * every snapshot (Mnih et al. 2015, who held out states gathered by a random policy). Here the
 * states are drawn reproducibly from the recording's own explored steps: the closest thing in a
 * recording to states a random policy visits.
 */
import type { StepFile } from '../../formats/reader.ts';
import { FLAG_EXPLORED } from '../../formats/types.ts';
import { createRandom } from '../envs/random.ts';
import type { QFunction } from './series.ts';

export interface HeldOutStates {
  states: Float32Array;
  count: number;
  /** Where each came from. */
  places: { episode: number; step: number }[];
  /** "explored" when drawn from explored steps; "any" when the file had too few of them. */
  drawnFrom: 'explored' | 'any';
}

/** Reservoir sampling (Vitter 1985, Algorithm R) with a fixed seed: the same file always gives the same states. */
export function heldOutStates(file: StepFile, count = 500, seed = 1): HeldOutStates {
  const D = file.header.stateDims.length;
  const draw = (explored: boolean): HeldOutStates => {
    const rng = createRandom(seed);
    const states = new Float32Array(count * D);
    const places: { episode: number; step: number }[] = [];
    let seen = 0;
    for (const info of file.episodes) {
      if (info.end?.mode === 'eval') continue;
      const e = file.readEpisode(info.episode);
      for (let t = 0; t < e.n; t++) {
        if (explored && !(e.flags[t] & FLAG_EXPLORED)) continue;
        const slot = seen < count ? seen : rng.int(seen + 1);
        seen++;
        if (slot < count) {
          states.set(e.state.subarray(t * D, t * D + D), slot * D);
          places[slot] = { episode: e.episode, step: e.step[t] };
        }
      }
    }
    const n = Math.min(seen, count);
    return { states: states.subarray(0, n * D), count: n, places: places.slice(0, n), drawnFrom: explored ? 'explored' : 'any' };
  };
  const fromExplored = draw(true);
  return fromExplored.count >= Math.min(count, 32) ? fromExplored : draw(false);
}

export interface HealthPoint {
  role: string;
  id: string;
  trainingStep: number;
  averageMaxQ: number;
  /** Why this point is flagged, or null. */
  flag: string | null;
}

/** A climb is flagged when one snapshot's average is more than twice the previous one's and above r_max (common practice). */
export function healthSeries(points: { role: string; id: string; trainingStep: number; q: QFunction }[], held: HeldOutStates, actionCount: number, rMax: number, bound: number): HealthPoint[] {
  const out: HealthPoint[] = [];
  const ordered = [...points].sort((a, b) => a.trainingStep - b.trainingStep || a.role.localeCompare(b.role));
  const previous = new Map<string, number>();
  for (const p of ordered) {
    const q = p.q(held.states, held.count);
    let sum = 0;
    for (let i = 0; i < held.count; i++) {
      let m = -Infinity;
      let nan = false;
      for (let a = 0; a < actionCount; a++) {
        const v = q[i * actionCount + a];
        if (Number.isNaN(v)) nan = true;
        else if (v > m) m = v;
      }
      sum += nan ? NaN : m;
    }
    const avg = held.count ? sum / held.count : NaN;
    const prev = previous.get(p.role);
    let flag: string | null = null;
    if (!Number.isFinite(avg)) flag = `non-finite average (${avg})`;
    else if (Math.abs(avg) > bound) flag = `beyond the bound r_max/(1−γ) = ${bound.toPrecision(4)}`;
    else if (prev !== undefined && Number.isFinite(prev) && Math.abs(avg) > 2 * Math.abs(prev) && Math.abs(avg) > rMax) {
      flag = `sudden climb: ${avg.toPrecision(4)} from ${prev.toPrecision(4)} at the previous ${p.role} snapshot`;
    }
    previous.set(p.role, avg);
    out.push({ role: p.role, id: p.id, trainingStep: p.trainingStep, averageMaxQ: avg, flag });
  }
  return out;
}

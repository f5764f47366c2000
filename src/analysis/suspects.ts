/**
 * Suspects: steps (or runs of steps) where a value estimate is judged to have gone wrong. Every
 * suspect names the rule that raised it, a plain-language reason and the numbers behind it. The
 * rules and their severities are documented in DEVELOPERS.md ("How suspects are scored"); change
 * one here, change it there.
 */
import type { EpisodeEnd } from '../../formats/types.ts';
import type { EpisodeSeries } from './series.ts';

export type SuspectRule = 'non-finite' | 'beyond-bound' | 'overestimate-before-failure' | 'td-spike' | 'flip-burst-before-failure';

export interface Suspect {
  rule: SuspectRule;
  /** 0–100; ≥ 70 is high, ≥ 40 medium, below that low. */
  severity: number;
  level: 'high' | 'medium' | 'low';
  episode: number;
  /** Step indices within the episode, inclusive; `step` is the one to look at first. */
  from: number;
  to: number;
  step: number;
  reason: string;
  numbers: Record<string, number>;
}

export interface SuspectContext {
  actions: readonly string[];
  gamma: number;
  /** Largest finite |reward| in the file. */
  rMax: number;
}

/** The value bound r_max/(1−γ): no sequence of rewards is worth more (common practice). */
export function valueBound(rMax: number, gamma: number): number {
  return gamma < 1 ? rMax / (1 - gamma) : Infinity;
}

export const levelOf = (severity: number): Suspect['level'] => (severity >= 70 ? 'high' : severity >= 40 ? 'medium' : 'low');

const TD_SPIKE_FACTOR = 10;
const FLIP_WINDOW = 20;
const OVERESTIMATE_SLACK = 2;
const OVERESTIMATE_FRACTION = 0.25;

export function episodeSuspects(s: EpisodeSeries, end: EpisodeEnd | null, steps: Uint32Array, ctx: SuspectContext): Suspect[] {
  const out: Suspect[] = [];
  const A = ctx.actions.length;
  const N = s.n;
  const at = (row: number) => steps[row];
  const make = (rule: SuspectRule, severity: number, fromRow: number, toRow: number, keyRow: number, reason: string, numbers: Record<string, number>) => {
    const sev = Math.round(Math.max(0, Math.min(100, severity)));
    out.push({ rule, severity: sev, level: levelOf(sev), episode: s.episode, from: at(fromRow), to: at(toRow), step: at(keyRow), reason, numbers });
  };
  const failedAtEnd = end !== null && end.failed && end.outcome === 'terminal' && N > 0;

  // non-finite: evidence of a blow-up or a bug upstream; nothing after it can be trusted.
  if (s.firstNonFinite >= 0) {
    const t = s.firstNonFinite;
    let last = t;
    let count = 0;
    for (let i = t; i < N; i++) if (s.nonFinite[i]) {
      last = i;
      count++;
    }
    const bad = [...Array(A).keys()].filter((a) => !Number.isFinite(s.q[t * A + a])).map((a) => `Q(s, ${ctx.actions[a]}) = ${s.q[t * A + a]}`);
    const what = bad.length ? bad.join(', ') : `reward = ${s.td?.reward[t] ?? 'non-finite'}`;
    make('non-finite', 100, t, last, t, `first non-finite value of the episode at step ${at(t)}: ${what}; ${count} steps with non-finite values follow`, { steps: count });
  }

  // beyond-bound: |Q| above r_max/(1−γ) can only come from bootstrapping on estimates that grew by themselves.
  const bound = valueBound(ctx.rMax, ctx.gamma);
  if (Number.isFinite(bound) && bound > 0) {
    let first = -1;
    let worst = -1;
    let worstAbs = 0;
    let lastInRun = -1;
    for (let t = 0; t < N; t++) {
      let m = 0;
      for (let a = 0; a < A; a++) {
        const v = Math.abs(s.q[t * A + a]);
        if (Number.isFinite(v) && v > m) m = v;
      }
      if (m > bound) {
        if (first < 0) first = t;
        if (first >= 0 && (lastInRun === t - 1 || lastInRun < 0)) lastInRun = t;
        if (m > worstAbs) {
          worstAbs = m;
          worst = t;
        }
      }
    }
    if (first >= 0) {
      const ratio = worstAbs / bound;
      make(
        'beyond-bound',
        60 + 10 * Math.log10(ratio),
        first,
        lastInRun,
        first,
        `|Q| exceeds the bound r_max/(1−γ) = ${fmt(bound)} (r_max = ${fmt(ctx.rMax)}, γ = ${ctx.gamma}) from step ${at(first)}; worst ${fmt(worstAbs)} at step ${at(worst)}, ${fmt(ratio)}× the bound`,
        { bound, worst: worstAbs, ratio },
      );
    }
  }

  // overestimate-before-failure: from some step on, Q(s,a) stays above the realised return until
  // the failure. "Stays" is judged on the value error averaged over 5 steps (a single step under the
  // threshold does not end the run), and the run may stop up to OVERESTIMATE_SLACK steps short of
  // the failure, where the values finally see it coming. Only failed episodes are judged, so the
  // threshold can be a quarter of the largest reward without raising alarms in healthy ones.
  if (failedAtEnd) {
    const tau = OVERESTIMATE_FRACTION * ctx.rMax;
    const smooth = movingMean(s.valueError, 2);
    let last = N - 1;
    while (last >= N - 1 - OVERESTIMATE_SLACK && last >= 0 && !(smooth[last] > tau)) last--;
    let t0 = last + 1;
    while (t0 > 0 && smooth[t0 - 1] > tau) t0--;
    if (last >= N - 1 - OVERESTIMATE_SLACK && last - t0 + 1 >= 3) {
      let sum = 0;
      for (let t = t0; t <= last; t++) sum += s.valueError[t];
      const mean = sum / (last - t0 + 1);
      const until = last === N - 1 ? `until the failure at step ${at(N - 1)}` : `until step ${at(last)}, ${N - 1 - last} before the failure at step ${at(N - 1)}`;
      make(
        'overestimate-before-failure',
        50 + Math.min(40, (10 * mean) / Math.max(tau, 1e-12)),
        t0,
        last,
        t0,
        `from step ${at(t0)} ${until} (${end!.reason || 'terminal'}), Q(s, a) stays above the realised return by more than ${fmt(tau)} (¼·r_max), by ${fmt(mean)} on average: the values did not see the failure coming`,
        { threshold: tau, meanExcess: mean, steps: last - t0 + 1 },
      );
    }
  }

  // td-spike: |δ| far outside the episode's typical error.
  if (s.td && N > 0) {
    const abs = Array.from(s.td.delta, Math.abs).filter(Number.isFinite).sort((a, b) => a - b);
    const typical = abs.length ? abs[Math.floor((abs.length - 1) / 2)] : 0;
    const threshold = Math.max(TD_SPIKE_FACTOR * typical, 0.5 * ctx.rMax);
    const runs: [number, number, number][] = [];
    for (let t = 0; t < N; t++) {
      const d = Math.abs(s.td.delta[t]);
      if (!(d > threshold)) continue;
      const last = runs[runs.length - 1];
      if (last && last[1] === t - 1) {
        last[1] = t;
        if (d > Math.abs(s.td.delta[last[2]])) last[2] = t;
      } else runs.push([t, t, t]);
    }
    runs.sort((a, b) => Math.abs(s.td!.delta[b[2]]) - Math.abs(s.td!.delta[a[2]]) || a[0] - b[0]);
    for (const [from, to, key] of runs.slice(0, 3)) {
      const d = s.td.delta[key];
      make(
        'td-spike',
        Math.min(65, 40 + 10 * Math.log10(Math.abs(d) / threshold + 1) * 3),
        from,
        to,
        key,
        `TD error δ = y − Q(s, a) = ${fmt(d)} at step ${at(key)} (y = ${fmt(s.td.target[key])}, Q(s, a) = ${fmt(s.td.qTaken[key])}), ${fmt(Math.abs(d) / Math.max(typical, 1e-12))}× the episode's median |δ| of ${fmt(typical)}`,
        { delta: d, target: s.td.target[key], q: s.td.qTaken[key], medianAbsDelta: typical },
      );
    }
  }

  // flip-burst-before-failure: the greedy action starts flipping while the action gap collapses.
  if (failedAtEnd && N >= 2 * FLIP_WINDOW) {
    const w0 = N - FLIP_WINDOW;
    let flipsIn = 0;
    let flipsBefore = 0;
    for (let t = 1; t < N; t++) (t >= w0 ? (flipsIn += s.flips[t]) : (flipsBefore += s.flips[t]));
    const rateIn = flipsIn / FLIP_WINDOW;
    const rateBefore = flipsBefore / w0;
    const gapIn = median(s.gap.subarray(w0));
    const gapBefore = median(s.gap.subarray(0, w0));
    if (rateIn >= Math.max(0.25, 1.5 * rateBefore) && gapIn < 0.5 * gapBefore) {
      make(
        'flip-burst-before-failure',
        55 + Math.min(20, flipsIn),
        w0,
        N - 1,
        w0,
        `in the last ${FLIP_WINDOW} steps before the failure the greedy action flips ${flipsIn} times (rate ${fmt(rateIn)} against ${fmt(rateBefore)} before) while the median action gap falls from ${fmt(gapBefore)} to ${fmt(gapIn)}`,
        { flips: flipsIn, rate: rateIn, rateBefore, gap: gapIn, gapBefore },
      );
    }
  }
  return out;
}

/** Mean over [t − h, t + h], clipped to the series; a non-finite value makes its windows non-finite. */
export function movingMean(v: Float64Array, h: number): Float64Array {
  const out = new Float64Array(v.length);
  for (let t = 0; t < v.length; t++) {
    let sum = 0;
    let n = 0;
    for (let j = Math.max(0, t - h); j <= Math.min(v.length - 1, t + h); j++) {
      sum += v[j];
      n++;
    }
    out[t] = sum / n;
  }
  return out;
}

function median(a: Float32Array): number {
  const v = Array.from(a).filter(Number.isFinite).sort((x, y) => x - y);
  return v.length ? v[Math.floor((v.length - 1) / 2)] : NaN;
}

/** Severity first, then the earliest place, then the rule's name: the same input always ranks the same. */
export function rankSuspects(list: Suspect[]): Suspect[] {
  return [...list].sort((a, b) => b.severity - a.severity || a.episode - b.episode || a.step - b.step || a.rule.localeCompare(b.rule));
}

export function fmt(v: number): string {
  if (!Number.isFinite(v)) return String(v);
  const a = Math.abs(v);
  if (a !== 0 && (a >= 1e6 || a < 1e-3)) return v.toExponential(2);
  return String(Number(v.toPrecision(4)));
}

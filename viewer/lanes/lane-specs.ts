/**
 * The five lanes, built from the session's step columns and the worker's series: which arrays,
 * which colours, which emphasis. The lanes component only draws what it is given.
 */
import type { Session } from '../state/session.svelte.ts';
import { actionColour, palette } from '../theme.ts';
import type { LaneSpec } from './types.ts';

export function buildLanes(session: Session): LaneSpec[] {
  const s = session.steps;
  const h = session.current?.file.header;
  if (!s || !h) return [];
  const A = h.actions.length;
  const series = session.series && session.series.n === s.n ? session.series : null;
  const greedy = series?.greedy;
  const q: LaneSpec = {
    id: 'q',
    title: 'Q lane · Q(s, a) per action (thick where greedy)',
    series: h.actions.map((name, a) => ({
      name,
      values: s.q,
      stride: A,
      offset: a,
      colour: actionColour(a),
      emphasis: greedy ? Uint8Array.from(greedy, (g) => (g === a ? 1 : 0)) : undefined,
    })),
  };
  const qTaken = new Float32Array(s.n);
  for (let t = 0; t < s.n; t++) qTaken[t] = s.q[t * A + s.action[t]];
  const lanes: LaneSpec[] = [q];
  lanes.push({
    id: 'td',
    title: series?.td ? `TD lane · δ = y − Q(s, a), ${session.td.rule} rule` : 'TD lane · choose a target snapshot',
    series: series?.td ? [{ name: 'δ', values: series.td.delta, colour: palette.target, fill: true }] : [],
    zeroLine: true,
  });
  lanes.push({
    id: 'return',
    title: `Return lane · Q(s, a) against the realised return${series?.returnIsLowerHorizon ? ' (a lower horizon: the episode was cut off)' : ''}`,
    series: [
      { name: 'Q(s, a)', values: qTaken, colour: palette.greedy },
      ...(series ? [{ name: 'G', values: series.returns, colour: palette.realised, dashed: true }] : []),
    ],
  });
  lanes.push({ id: 'gap', title: 'Gap lane · best − second-best Q', series: series ? [{ name: 'gap', values: series.gap, colour: palette.inkSoft }] : [] });
  lanes.push({ id: 'reward', title: 'Reward lane', series: [{ name: 'r', values: s.reward, colour: palette.explored, fill: true }], zeroLine: true });
  return lanes;
}

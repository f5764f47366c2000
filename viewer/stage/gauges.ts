/**
 * The Stage for a control system episcope has no drawing for (or whose header lacks what the
 * drawing needs): one horizontal gauge per state dimension, min at the left, max at the right.
 */

import { actionMark, clamp, formatValue, keyOf, SIDE_MARGIN, TITLE_BAND, titleTexts } from './common.ts';
import type { Gauge, GaugeStage, Range, StageInput, StageText } from './types.ts';

const LABEL_SHARE = 0.28;
const VALUE_W = 84;
const NOTE_BAND = 16;
/** Rows shorter than this have no room for the range numbers under the track. */
const ROW_FOR_RANGE = 30;

export function gaugeStage(input: StageInput, note?: string): GaugeStage {
  const width = Math.max(1, input.width);
  const height = Math.max(1, input.height);
  const mark = actionMark(input);
  const texts: StageText[] = titleTexts(input, mark);
  const count = input.stateDims.length;

  const top = TITLE_BAND + 4;
  const bottom = height - (note === undefined ? 6 : NOTE_BAND + 4);
  const rowH = Math.max(0, bottom - top) / Math.max(count, 1);
  const labelW = clamp(LABEL_SHARE * width, 60, 160);
  const x0 = SIDE_MARGIN + labelW;
  const x1 = Math.max(x0 + 1, width - SIDE_MARGIN - VALUE_W);
  const sources: string[] = [];

  const gauges: Gauge[] = input.stateDims.map((dim, i) => {
    const value = i < input.state.length ? input.state[i] : Number.NaN;
    const nonFinite = !Number.isFinite(value);
    const { range, source } = gaugeRange(input, i, value);
    sources.push(`${range.min}:${range.max}`);
    const y = top + rowH * (i + 0.5);
    const clipped: -1 | 0 | 1 = nonFinite ? 0 : value < range.min ? -1 : value > range.max ? 1 : 0;
    const fraction = nonFinite ? 0 : clamp((value - range.min) / (range.max - range.min), 0, 1);
    const valueText = formatValue(value);

    const label = dim.unit === '' ? dim.name : `${dim.name} (${dim.unit})`;
    texts.push({ text: label, x: SIDE_MARGIN, y, anchorX: 0, anchorY: 0.5, tone: 'ink', size: 'body' });
    texts.push({ text: valueText, x: width - SIDE_MARGIN, y, anchorX: 1, anchorY: 0.5, tone: nonFinite ? 'alarm' : 'ink', size: 'body', mono: true });
    if (rowH >= ROW_FOR_RANGE) {
      const ends: [number, number, number][] = [[range.min, x0, 0], [range.max, x1, 1]];
      for (const [end, x, anchorX] of ends) {
        texts.push({ text: formatValue(end), x, y: y + 5, anchorX, anchorY: 0, tone: 'faint', size: 'small', mono: true });
      }
    }

    return {
      name: dim.name,
      unit: dim.unit,
      value,
      valueText,
      nonFinite,
      range,
      rangeSource: source,
      track: { x0, x1, y },
      marker: nonFinite ? null : { x: x0 + fraction * (x1 - x0), y },
      clipped,
    };
  });

  if (note !== undefined) {
    texts.push({ text: note, x: SIDE_MARGIN, y: height - 4, anchorX: 0, anchorY: 1, tone: 'soft', size: 'small' });
  }

  return {
    kind: 'gauges',
    width,
    height,
    action: mark,
    texts,
    layoutKey: keyOf('gauges', width, height, count, ...sources),
    gauges,
    ...(note === undefined ? {} : { note }),
  };
}

/**
 * A gauge's range: `<name>Min` / `<name>Max` from the header's params when both are there, else
 * the episode's own min/max from the caller, else a range about zero wide enough for the value.
 * A range of zero width (a dimension that never moved) is opened up so the marker has a place.
 */
export function gaugeRange(input: StageInput, index: number, value: number): { range: Range; source: Gauge['rangeSource'] } {
  const name = input.stateDims[index].name;
  const fromParams = finiteRange(input.system.params?.[`${name}Min`], input.system.params?.[`${name}Max`]);
  if (fromParams && fromParams.max > fromParams.min) return { range: fromParams, source: 'params' };

  const episode = input.ranges?.[index];
  const fromEpisode = episode ? finiteRange(episode.min, episode.max) : undefined;
  if (fromEpisode && fromEpisode.max >= fromEpisode.min) {
    if (fromEpisode.max > fromEpisode.min) return { range: fromEpisode, source: 'episode' };
    const pad = fromEpisode.min === 0 ? 1 : Math.abs(fromEpisode.min) / 2;
    return { range: { min: fromEpisode.min - pad, max: fromEpisode.max + pad }, source: 'episode' };
  }

  const reach = Number.isFinite(value) ? Math.max(1, Math.abs(value)) : 1;
  return { range: { min: -reach, max: reach }, source: 'none' };
}

function finiteRange(min: unknown, max: unknown): Range | undefined {
  if (typeof min !== 'number' || typeof max !== 'number') return undefined;
  return Number.isFinite(min) && Number.isFinite(max) ? { min, max } : undefined;
}

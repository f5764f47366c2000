/** Small pieces every kind of Stage shares: number text, action names, the title line. */

import type { ActionMark, StageInput, StageText } from './types.ts';

/** Space kept clear at the top of every Stage for the title line. */
export const TITLE_BAND = 26;
export const SIDE_MARGIN = 12;

/**
 * A number as the Stage prints it: four significant digits, and non-finite values spelled out
 * ('NaN', 'Infinity', '-Infinity') so a broken state is never drawn as if it were a number.
 */
export function formatValue(value: number): string {
  if (!Number.isFinite(value)) return String(value);
  if (value === 0) return '0';
  const size = Math.abs(value);
  if (size >= 1e5 || size < 1e-3) return value.toExponential(2);
  return String(Number(value.toPrecision(4)));
}

export function actionMark(input: StageInput): ActionMark {
  const { action, actions, explored } = input;
  const known = Number.isInteger(action) && action >= 0 && action < actions.length;
  return { index: action, name: known ? actions[action] : `action ${action}`, explored };
}

/**
 * The direction an action name says, if it says one: 'push left' → −1, 'forward' → +1,
 * 'coast' → 0. Words only (no substrings), so 'upright' does not read as 'right'.
 */
export function directionFromName(name: string): -1 | 0 | 1 | undefined {
  const words = new Set(name.toLowerCase().split(/[^a-z]+/));
  const has = (...list: string[]) => list.some((word) => words.has(word));
  if (has('left', 'reverse', 'back', 'backward', 'backwards', 'negative', 'minus')) return -1;
  if (has('right', 'forward', 'forwards', 'ahead', 'positive', 'plus')) return 1;
  if (has('coast', 'none', 'idle', 'noop', 'nothing', 'stay', 'hold', 'zero')) return 0;
  return undefined;
}

/** The mapped state index for a role, if the header maps it onto a real state dimension. */
export function roleIndex(input: StageInput, role: string): number | undefined {
  const index = input.system.map?.[role];
  if (!Number.isInteger(index) || index < 0 || index >= input.state.length) return undefined;
  return index;
}

/** A finite number from params, or undefined. */
export function param(input: StageInput, key: string): number | undefined {
  const value = input.system.params?.[key];
  return typeof value === 'number' && Number.isFinite(value) ? value : undefined;
}

/**
 * The line at the top: the system's title on the left, the action on the right in the colour
 * that says whether it was greedy or explored (the word is written too, for print and colour-blind
 * readers).
 */
export function titleTexts(input: StageInput, mark: ActionMark): StageText[] {
  const y = TITLE_BAND / 2;
  const title = input.system.title ?? input.system.kind;
  const how = mark.explored ? 'explored' : 'greedy';
  return [
    { text: title, x: SIDE_MARGIN, y, anchorX: 0, anchorY: 0.5, tone: 'soft', size: 'body' },
    {
      text: `${mark.name} · ${how}`,
      x: input.width - SIDE_MARGIN,
      y,
      anchorX: 1,
      anchorY: 0.5,
      tone: mark.explored ? 'explored' : 'greedy',
      size: 'body',
    },
  ];
}

/** A key that changes when any of the listed numbers or strings do. */
export function keyOf(...parts: (string | number | undefined)[]): string {
  return parts.map((part) => String(part)).join('|');
}

export function clamp(value: number, lo: number, hi: number): number {
  return Math.min(Math.max(value, lo), hi);
}

/**
 * episcope's look, in one place: a light "bench notebook" palette (warm paper, ink, one accent per
 * meaning) and a small type scale. Components and canvases read colours from here, never inline.
 */

export const palette = {
  paper: '#f4f1e8',
  panel: '#fbfaf5',
  rule: '#d9d3c3',
  ink: '#1e2a30',
  inkSoft: '#5b6870',
  inkFaint: '#9aa3a8',
  /** The greedy choice, and the agent acting on its own values. */
  greedy: '#0f7173',
  /** An ε-greedy random action. */
  explored: '#c7821a',
  /** Failure, suspects, non-finite values. */
  alarm: '#b3392b',
  /** The target network and everything measured against it. */
  target: '#5a4a9c',
  /** The realised (Monte Carlo) return. */
  realised: '#3f7d3a',
  cursor: '#1e2a30',
  inMark: '#2f6db5',
  outMark: '#2f6db5',
  syncMark: '#8c7fbf',
  flipTick: '#0f7173',
} as const;

/** One colour per action line, in action order; cycles for more actions. */
export const actionColours = ['#0f7173', '#c7821a', '#5a4a9c', '#3f7d3a', '#8a5a44', '#2f6db5'];
export const actionColour = (a: number) => actionColours[a % actionColours.length];

/** Colours as 0xRRGGBB numbers, for Pixi. */
export const hex = (css: string) => Number.parseInt(css.slice(1), 16);

export const type = {
  family: "'IBM Plex Sans', 'Source Sans 3', system-ui, sans-serif",
  mono: "'IBM Plex Mono', 'Source Code Pro', ui-monospace, monospace",
  small: 11,
  body: 13,
  heading: 15,
  title: 19,
} as const;

/** The palette and type scale as CSS custom properties (`--ink-soft`, `--fs-body`, …). */
export function cssVariables(): Record<string, string> {
  const kebab = (s: string) => s.replace(/[A-Z]/g, (c) => `-${c.toLowerCase()}`);
  const vars: Record<string, string> = {};
  for (const [k, v] of Object.entries(palette)) vars[`--${kebab(k)}`] = v;
  vars['--flip'] = palette.flipTick;
  vars['--sync'] = palette.syncMark;
  vars['--family'] = type.family;
  vars['--mono'] = type.mono;
  vars['--fs-small'] = `${type.small}px`;
  vars['--fs-body'] = `${type.body}px`;
  vars['--fs-heading'] = `${type.heading}px`;
  vars['--fs-title'] = `${type.title}px`;
  return vars;
}

/** The URL hash keeps file, episode, step and zoom, so a reload returns to the same view. */
import { describe, expect, it } from 'vitest';
import { decodeHash, encodeHash, type ViewHash } from '../../viewer/state/hash.ts';
import { keyAction } from '../../viewer/state/keys.ts';

describe('the view hash', () => {
  const views: ViewHash[] = [
    { file: 'trolley.steps', episode: 155, step: 40, from: 0, to: 182 },
    { file: 'a file & name #2.steps', episode: 0, step: 0, from: 10, to: 20 },
    { file: null, episode: 3, step: null, from: null, to: null },
    { file: null, episode: null, step: null, from: null, to: null },
  ];
  it.each(views)('round-trips %o', (v) => {
    expect(decodeHash(encodeHash(v))).toEqual(v);
  });

  it('writes the readable form the README shows', () => {
    expect(encodeHash({ file: 'trolley.steps', episode: 155, step: 40, from: 0, to: 182 })).toBe('#file=trolley.steps&episode=155&step=40&from=0&to=182');
  });

  it('ignores unknown keys, malformed numbers and broken escapes instead of failing', () => {
    expect(decodeHash('#episode=-3&step=4.5&from=x&to=%E0%A4%A&zoom=2&file=ok.steps')).toEqual({ file: 'ok.steps', episode: null, step: null, from: null, to: null });
    expect(decodeHash('')).toEqual({ file: null, episode: null, step: null, from: null, to: null });
  });
});

describe('the keys of ../shared/NAMING.md', () => {
  const table: [string, boolean, unknown][] = [
    ['ArrowRight', false, { kind: 'step', by: 1 }],
    ['ArrowLeft', false, { kind: 'step', by: -1 }],
    ['ArrowRight', true, { kind: 'step', by: 10 }],
    ['ArrowLeft', true, { kind: 'step', by: -10 }],
    ['Home', false, { kind: 'home' }],
    ['End', false, { kind: 'end' }],
    [' ', false, { kind: 'play' }],
    ['[', false, { kind: 'in' }],
    [']', false, { kind: 'out' }],
    ['n', false, { kind: 'flip', direction: 1 }],
    ['N', true, { kind: 'flip', direction: -1 }],
    ['s', false, { kind: 'suspect' }],
    ['x', false, null],
  ];
  it.each(table)('%s (shift %s)', (key, shiftKey, action) => {
    expect(keyAction({ key, shiftKey })).toEqual(action);
  });
  it('leaves browser shortcuts alone', () => {
    expect(keyAction({ key: 's', shiftKey: false, ctrlKey: true })).toBeNull();
  });
});

import { afterAll, describe, expect, it } from 'vitest';
import { openStepFilePath } from '../../formats/node.ts';
import { FLAG_EXPLORED } from '../../formats/types.ts';
import { heldOutStates } from '../../src/analysis/health.ts';

const file = openStepFilePath(new URL('../../samples/trolley.steps', import.meta.url).pathname);
afterAll(() => file.close());

describe('heldOutStates on trolley.steps', () => {
  // Mnih et al. (2015), Methods: the held-out states come from a random policy; explored steps of
  // training episodes are the recording's nearest thing to that.
  const held = heldOutStates(file);

  it('is reproducible: the same file gives identical states twice', () => {
    expect(heldOutStates(file)).toEqual(held);
    expect(held.count).toBe(500);
    expect(held.drawnFrom).toBe('explored');
  });

  it('draws only from explored steps of training episodes, and each state is the one at its place', () => {
    const D = file.header.stateDims.length;
    expect(held.places).toHaveLength(held.count);
    expect(held.states.length).toBe(held.count * D);
    held.places.forEach(({ episode, step }, i) => {
      expect(file.episode(episode).end?.mode, `place ${i}`).not.toBe('eval');
      const e = file.readEpisode(episode);
      const row = e.step.indexOf(step);
      expect(row, `place ${i}`).toBeGreaterThanOrEqual(0);
      expect(e.flags[row] & FLAG_EXPLORED, `place ${i}: episode ${episode} step ${step}`).toBe(FLAG_EXPLORED);
      expect(held.states.subarray(i * D, i * D + D)).toEqual(e.state.subarray(row * D, row * D + D));
    });
  });

  it('draws each place at most once', () => {
    const keys = new Set(held.places.map((p) => `${p.episode}:${p.step}`));
    expect(keys.size).toBe(held.count);
  });

  it('gives another draw for another seed', () => {
    expect(heldOutStates(file, 500, 2).places).not.toEqual(held.places);
  });
});

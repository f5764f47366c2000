import { describe, expect, it } from 'vitest';
import { targetTimeline } from '../../src/analysis/target-age.ts';
import { recordInMemory, taggedLayers, trolleyHeader } from './recording.ts';
import type { Recorder } from '../../src/record/types.ts';

// A trainer that syncs its target every K training steps and evaluates between training episodes.
// Evaluation does no updates, so its steps neither sync nor age the target.
const K = 3;
const EPISODES = [
  { mode: 'train', length: 7 },
  { mode: 'eval', length: 4 },
  { mode: 'train', length: 9 },
  { mode: 'eval', length: 3 },
  { mode: 'train', length: 5 },
];

interface Expected {
  changes: { episode: number; step: number; fileStep: number; targetId: string }[];
  age: number[][];
}

function record(): { file: ReturnType<typeof recordInMemory>; expected: Expected } {
  const expected: Expected = { changes: [], age: [] };
  // Blocks of 4 put some syncs inside a block and one (episode 2, step 8) at a block's first row.
  const file = recordInMemory(trolleyHeader(0.99), 4, (rec: Recorder) => {
    let trainingSteps = 0;
    let lastSync = 0;
    EPISODES.forEach(({ mode, length }, episode) => {
      const ages: number[] = [];
      for (let t = 0; t < length; t++) {
        if (mode === 'train' && trainingSteps % K === 0) {
          // store: false — only the id goes into the step blocks, as a fast-syncing trainer would record it.
          const targetId = rec.snapshot({ role: 'target', trainingStep: trainingSteps, layers: taggedLayers(trainingSteps), store: false });
          expected.changes.push({ episode, step: t, fileStep: trainingSteps, targetId });
          lastSync = trainingSteps;
        }
        ages.push(trainingSteps - lastSync);
        rec.step({ state: [t, 0], action: 1, reward: 1, q: [0, 0, 0], truncated: t === length - 1 });
        if (mode === 'train') trainingSteps++;
      }
      rec.endEpisode({ mode });
      expected.age.push(ages);
    });
  });
  return { file, expected };
}

describe('targetTimeline', () => {
  const { file, expected } = record();
  const timeline = targetTimeline(file);

  it('finds every target change where the recorder put it', () => {
    // Training steps 0, 3, …, 18: episode 0 steps 0, 3, 6; episode 2 steps 2, 5, 8; episode 4 step 2.
    expect(expected.changes.map((c) => [c.episode, c.step, c.fileStep])).toEqual([
      [0, 0, 0],
      [0, 3, 3],
      [0, 6, 6],
      [2, 2, 9],
      [2, 5, 12],
      [2, 8, 15],
      [4, 2, 18],
    ]);
    expect(new Set(expected.changes.map((c) => c.targetId)).size).toBe(expected.changes.length);
    expect(timeline.cadence.changes).toEqual(expected.changes);
  });

  it('measures the cadence in training steps, skipping evaluation', () => {
    expect(timeline.cadence.intervals).toEqual([K, K, K, K, K, K]);
    expect([timeline.cadence.median, timeline.cadence.min, timeline.cadence.max]).toEqual([K, K, K]);
    expect(timeline.cadence.irregular).toBe(false);
  });

  it('gives each step the training steps since the last change; evaluation steps keep the age they started with', () => {
    expect(expected.age).toEqual([
      [0, 1, 2, 0, 1, 2, 0],
      [1, 1, 1, 1],
      [1, 2, 0, 1, 2, 0, 1, 2, 0],
      [1, 1, 1],
      [1, 2, 0, 1, 2],
    ]);
    expect([...timeline.age.keys()]).toEqual([0, 1, 2, 3, 4]);
    expected.age.forEach((ages, episode) => expect(Array.from(timeline.age.get(episode)!)).toEqual(ages));
  });

  it('calls an uneven cadence irregular', () => {
    // Syncs after 2, 2, 2, 9 training steps: past the first interval, the longest is over twice the shortest.
    const at = [0, 2, 4, 6, 15];
    const uneven = recordInMemory(trolleyHeader(0.99), 64, (rec) => {
      for (let t = 0; t < 16; t++) {
        if (at.includes(t)) rec.snapshot({ role: 'target', trainingStep: t, layers: taggedLayers(t), store: false });
        rec.step({ state: [t, 0], action: 0, reward: 0, q: [0, 0, 0], truncated: t === 15 });
      }
      rec.endEpisode();
    });
    const cadence = targetTimeline(uneven).cadence;
    expect(cadence.intervals).toEqual([2, 2, 2, 9]);
    expect(cadence.irregular).toBe(true);
  });
});

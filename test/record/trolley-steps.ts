/**
 * The steps the killed-recorder child process records, computed from (episode, step) alone so
 * that the test can check what survived without sharing memory with the child.
 */
export const BLOCK_SIZE = 10;
/** Lengths of the three episodes that end normally. */
export const ENDED_EPISODES = [23, 10, 7];
/** Steps of the fourth episode taken before the process kills itself. */
export const STEPS_BEFORE_KILL = 25;

export function trolleyStep(episode: number, step: number) {
  return {
    state: [episode + step / 100, -step / 50],
    action: (episode + step) % 2,
    reward: step % 5 === 4 ? -1 : 1,
    q: [step / 4, episode - step / 8],
    explored: step % 3 === 0,
    epsilon: 1 - episode / 10,
  };
}

export const CHILD_HEADER = {
  stateDims: [
    { name: 'position', unit: 'm' },
    { name: 'angle', unit: 'rad' },
  ],
  actions: ['push left', 'push right'],
  gamma: 0.99,
  system: { kind: 'cart-pole', title: 'balancing trolley', map: { position: 0, angle: 1 } },
};

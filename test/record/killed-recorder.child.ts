/**
 * Run as a child process by file-sink.test.ts: records three whole episodes to the path given,
 * then kills itself with SIGKILL in the middle of the fourth, as an out-of-memory killer would.
 */
import { recordToFile } from '../../src/record/node.ts';
import { BLOCK_SIZE, CHILD_HEADER, ENDED_EPISODES, STEPS_BEFORE_KILL, trolleyStep } from './trolley-steps.ts';

const path = process.argv[2];
const rec = recordToFile(path, CHILD_HEADER, { blockSize: BLOCK_SIZE });
ENDED_EPISODES.forEach((length, episode) => {
  for (let t = 0; t < length; t++) rec.step(trolleyStep(episode, t));
  rec.endEpisode({ reason: 'time limit' });
});
for (let t = 0; t < STEPS_BEFORE_KILL; t++) rec.step(trolleyStep(ENDED_EPISODES.length, t));
process.kill(process.pid, 'SIGKILL');

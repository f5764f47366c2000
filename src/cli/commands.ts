/** Commands that load heavy modules (TensorFlow.js) are imported only when they run, so `summary` starts fast. */
import { registerCommand } from './main.ts';
import { demoUsage } from './usage.ts';

registerCommand('demo', {
  run: async (argv, io) => (await import('./demo.ts')).demoCommand(argv, io),
  usage: demoUsage,
  what: 'train real deep Q-learning agents and write the sample recordings',
});

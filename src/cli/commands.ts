/** Commands that load heavy modules (TensorFlow.js) are imported only when they run, so `summary` starts fast. */
import { registerCommand } from './main.ts';
import { clipUsage, demoUsage, healthUsage, importUsage, importWhat, snapshotUsage, snapshotWhat, suspectsUsage, tdUsage, viewUsage } from './usage.ts';

registerCommand('demo', {
  run: async (argv, io) => (await import('./demo.ts')).demoCommand(argv, io),
  usage: demoUsage,
  what: 'train real deep Q-learning agents and write the sample recordings',
});

registerCommand('td', {
  run: async (argv, io) => (await import('./td.ts')).tdCommand(argv, io),
  usage: tdUsage,
  what: 'TD targets and errors against a target snapshot, step by step (δ = y − Q(s, a))',
});
registerCommand('suspects', {
  run: async (argv, io) => (await import('./suspects.ts')).suspectsCommand(argv, io),
  usage: suspectsUsage,
  what: 'the ranked steps where value estimates went wrong, and a verdict per episode',
});
registerCommand('health', {
  run: async (argv, io) => (await import('./health.ts')).healthCommand(argv, io),
  usage: healthUsage,
  what: 'average max Q over held-out states for every snapshot, in training order',
});
registerCommand('view', {
  run: async (argv, io) => (await import('./view.ts')).viewCommand(argv, io),
  usage: viewUsage,
  what: 'scrub through episodes in the viewer, served on 127.0.0.1 (default port 7357)',
});
registerCommand('clip', {
  run: async (argv, io) => (await import('./clip.ts')).clipCommand(argv, io),
  usage: clipUsage,
  what: 'cut a short segment into a clip step file or a self-contained clip page to share',
});
registerCommand('import', {
  run: async (argv, io) => (await import('./import.ts')).importCommand(argv, io),
  usage: importUsage,
  what: importWhat,
});
registerCommand('snapshot', {
  run: async (argv, io) => (await import('./snapshot-import.ts')).snapshotCommand(argv, io),
  usage: snapshotUsage,
  what: snapshotWhat,
});

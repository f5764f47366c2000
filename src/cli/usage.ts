export const demoUsage = 'episcope demo [--out DIR] [--only NAME] [--quick]';

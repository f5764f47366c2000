/** `npm run bench [-- --json]`: every benchmark, a readable table or one JSON object of named figures. */
import { render } from './timing.ts';
import { stepFileBench } from './stepfile.bench.ts';

const json = process.argv.includes('--json');
const results: Record<string, Record<string, number>> = {};
const sections: [string, () => { rows: import('./timing.ts').BenchRow[]; figures: Record<string, number> }][] = [
  ['step files (1,000,000 steps, D = 4, A = 2)', stepFileBench],
];
for (const [title, run] of sections) {
  const { rows, figures } = run();
  results[title] = figures;
  if (!json) console.log(render(title, rows) + '\n');
}
if (json) console.log(JSON.stringify({ node: process.version, date: new Date().toISOString(), results }, null, 1));

/** `npm run bench [-- --json]`: every benchmark, a readable table or one JSON object of named figures. */
import { render } from './timing.ts';
import { stepFileBench } from './stepfile.bench.ts';
import { tdBench } from './td.bench.ts';
import { viewerBench } from './viewer.bench.ts';
import { importBench } from './import.bench.ts';

const json = process.argv.includes('--json');
const results: Record<string, Record<string, number>> = {};
type Section = () => { rows: import('./timing.ts').BenchRow[]; figures: Record<string, number> } | Promise<{ rows: import('./timing.ts').BenchRow[]; figures: Record<string, number> }>;
const sections: [string, Section][] = [
  ['step files (1,000,000 steps, D = 4, A = 2)', stepFileBench],
  ['TD recomputation (1,000,000 steps, 4→64→64→2 target)', tdBench],
  ['viewer in Chromium (a 1,000,000-step episode)', viewerBench],
  ['import (1,000,000 JSON Lines, D = 4, A = 2)', importBench],
];
const only = process.argv.find((a) => a.startsWith('--only='))?.slice(7);
for (const [title, run] of sections) {
  if (only && !title.toLowerCase().includes(only.toLowerCase())) continue;
  const { rows, figures } = await run();
  results[title] = figures;
  if (!json) console.log(render(title, rows) + '\n');
}
if (json) console.log(JSON.stringify({ node: process.version, date: new Date().toISOString(), results }, null, 1));

/**
 * `episcope import` of a 1,000,000-line JSON Lines log (D = 4, A = 2, episodes of 500 steps), to
 * show the import streams: the log is written to a temporary folder first, then imported while
 * the resident set size is sampled every 10 ms. The peak is set against the log's size: an
 * importer that held the log, or its parsed lines, would need a multiple of it.
 */
import { once } from 'node:events';
import { createWriteStream, mkdtempSync, rmSync, statSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { createRandom } from '../src/envs/random.ts';
import { importLog } from '../src/import/importer.ts';
import type { BenchRow } from './timing.ts';

const LINES = 1_000_000;
const EPISODE = 500;
const MB = 1024 * 1024;

/** Write the log in batches of lines, waiting for the stream to drain: the generator stays small too. */
async function writeLog(path: string): Promise<number> {
  const rng = createRandom(7);
  const out = createWriteStream(path);
  const r = (x: number) => Math.round(x * 1e6) / 1e6;
  let batch: string[] = [];
  for (let t = 0; t < LINES; t++) {
    const step = t % EPISODE;
    const last = step === EPISODE - 1;
    const q0 = rng.uniform(0, 5);
    const q1 = rng.uniform(0, 5);
    batch.push(
      JSON.stringify({
        episode: Math.floor(t / EPISODE),
        step,
        state: [r(rng.uniform(-2, 2)), r(rng.uniform(-1, 1)), r(rng.uniform(-0.2, 0.2)), r(rng.uniform(-1, 1))],
        action: q0 > q1 ? 0 : 1,
        reward: 1,
        terminal: false,
        truncated: last,
        q: [r(q0), t % 10_007 === 0 ? 'NaN' : r(q1)],
        explored: rng.uniform(0, 1) < 0.1,
        epsilon: r(Math.max(0.05, 1 - t / LINES)),
      }),
    );
    if (batch.length === 10_000) {
      if (!out.write(batch.join('\n') + '\n')) await once(out, 'drain');
      batch = [];
    }
  }
  if (batch.length) out.write(batch.join('\n') + '\n');
  out.end();
  await once(out, 'finish');
  return statSync(path).size;
}

export async function importBench(): Promise<{ rows: BenchRow[]; figures: Record<string, number> }> {
  const dir = mkdtempSync(join(tmpdir(), 'episcope-import-bench-'));
  try {
    const input = join(dir, 'log.jsonl');
    const out = join(dir, 'log.steps');
    const inputBytes = await writeLog(input);
    (globalThis as { gc?: () => void }).gc?.();
    const rssBefore = process.memoryUsage().rss;
    let peak = rssBefore;
    const sampler = setInterval(() => {
      peak = Math.max(peak, process.memoryUsage().rss);
    }, 10);
    const t0 = performance.now();
    const result = await importLog({ input, out, gamma: 0.99, compress: true });
    const seconds = (performance.now() - t0) / 1000;
    clearInterval(sampler);
    peak = Math.max(peak, process.memoryUsage().rss);
    const figures = {
      lines: result.lines,
      inputMB: inputBytes / MB,
      outputMB: result.bytes / MB,
      seconds,
      linesPerSecond: result.lines / seconds,
      rssBeforeMB: rssBefore / MB,
      peakRssMB: peak / MB,
      rssGrowthMB: (peak - rssBefore) / MB,
      // The process's lifetime peak (the generator included), as the kernel counts it.
      maxRssMB: process.resourceUsage().maxRSS / 1024,
    };
    const rows: BenchRow[] = [
      { what: 'log (JSON Lines)', value: figures.inputMB, unit: 'MB' },
      { what: 'step file written (compressed)', value: figures.outputMB, unit: 'MB' },
      { what: 'import, two streamed passes', value: seconds, unit: 's' },
      { what: 'lines per second', value: figures.linesPerSecond, unit: 'lines/s' },
      { what: 'RSS before the import', value: figures.rssBeforeMB, unit: 'MB' },
      { what: 'peak RSS during the import', value: figures.peakRssMB, unit: 'MB' },
      {
        what: 'RSS growth during the import',
        value: figures.rssGrowthMB,
        unit: 'MB',
        // Holding the log alone would take its size again (more as UTF-16 strings); a third of it leaves room for the GC's slack.
        target: `< a third of the log (${(figures.inputMB / 3).toFixed(0)} MB)`,
        ok: figures.rssGrowthMB < figures.inputMB / 3,
      },
    ];
    return { rows, figures };
  } finally {
    rmSync(dir, { recursive: true, force: true });
  }
}

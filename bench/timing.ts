/** Best-of-k wall time: these machines are noisy, so the fastest run is the one least disturbed. */
export function bestOf<T>(k: number, f: () => T): { seconds: number; result: T } {
  let best = Infinity;
  let result!: T;
  for (let i = 0; i < k; i++) {
    const t0 = performance.now();
    result = f();
    const dt = (performance.now() - t0) / 1000;
    if (dt < best) best = dt;
  }
  return { seconds: best, result };
}

export interface BenchRow {
  what: string;
  value: number;
  unit: string;
  target?: string;
  ok?: boolean;
}

export function render(title: string, rows: BenchRow[]): string {
  const w = Math.max(...rows.map((r) => r.what.length));
  const lines = [title, '─'.repeat(title.length)];
  for (const r of rows) {
    const v = Math.abs(r.value) >= 100 ? Math.round(r.value).toLocaleString('en') : r.value.toPrecision(3);
    const tail = r.target ? `   target ${r.target}  ${r.ok ? 'met' : 'MISSED'}` : '';
    lines.push(`${r.what.padEnd(w)}  ${v.padStart(12)} ${r.unit}${tail}`);
  }
  return lines.join('\n');
}

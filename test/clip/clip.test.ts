/**
 * A clip carries a segment so that every number at a step equals the source's at the same step,
 * and `episcope clip` refuses bad ranges without touching its source.
 */
import { spawnSync } from 'node:child_process';
import { createHash } from 'node:crypto';
import { existsSync, mkdtempSync, readFileSync, statSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { openStepFilePath } from '../../formats/node.ts';
import { openStepFile } from '../../formats/reader.ts';
import { bytesSource } from '../../formats/source.ts';
import { clipProvenance, writeClip } from '../../src/clip/clip.ts';
import { clipPageHtml, escapeHtml } from '../../src/clip/page.ts';
import { episodeSeries } from '../../src/analysis/series.ts';
import { forwardDense } from '../../src/net/forward.ts';
import { MemorySink } from '../../src/record/memory-sink.ts';

const ROOT = join(import.meta.dirname, '..', '..');
const TROLLEY = join(ROOT, 'samples', 'trolley.steps');
const BIN = join(ROOT, 'bin', 'episcope.js');
const run = (...args: string[]) => spawnSync(process.execPath, [BIN, ...args], { encoding: 'utf8' });
const bits = (a: Float32Array) => Array.from(new Uint32Array(a.buffer, a.byteOffset, a.length));

describe('a clip step file of a committed sample', () => {
  const source = openStepFilePath(TROLLEY);
  const failing = source.episodes.find((e) => e.end?.mode === 'eval' && e.end.failed)!;
  const ep = failing.episode;
  const last = failing.length - 1;
  const from = Math.max(0, last - 60);
  const to = last - 5;
  const targetRef = [...source.snapshots].reverse().find((s) => s.role === 'target')!;
  const target = source.readSnapshot(targetRef);
  const sink = new MemorySink();
  const summary = writeClip(source, { episode: ep, from, to, context: 3, snapshots: [target], title: 'drift', note: 'see the gap', sourceName: 'trolley.steps' }, sink);
  const clip = openStepFile(bytesSource(sink.bytes()), 'clip.steps');
  const src = source.readEpisode(ep);
  const cut = clip.readEpisode(ep);
  const D = source.header.stateDims.length;
  const A = source.header.actions.length;

  it('holds the chosen steps and the context steps after them, under their source step indices', () => {
    expect(Array.from(cut.step)).toEqual(Array.from({ length: to - from + 4 }, (_, i) => from + i));
    expect(summary.steps).toBe(to - from + 4);
  });

  it('has every step’s state, action, reward, Q and flags bit-identical to the source', () => {
    for (let i = 0; i < cut.n; i++) {
      const t = cut.step[i];
      expect(bits(cut.state.subarray(i * D, i * D + D))).toEqual(bits(src.state.subarray(t * D, t * D + D)));
      expect(bits(cut.q.subarray(i * A, i * A + A))).toEqual(bits(src.q.subarray(t * A, t * A + A)));
      expect(cut.action[i]).toBe(src.action[t]);
      expect(bits(cut.reward.subarray(i, i + 1))).toEqual(bits(src.reward.subarray(t, t + 1)));
      expect(cut.flags[i]).toBe(src.flags[t]);
    }
  });

  it('gives the same recomputed δ at every chosen step, for the one-step and 3-step rules', () => {
    const snap = clip.readSnapshot(clip.snapshots.find((s) => s.id === target.id)!);
    const q = (s: Float32Array, n: number) => forwardDense(snap.layers, s, n);
    for (const td of [{ rule: 'dqn' as const }, { rule: 'double' as const }, { rule: 'nstep' as const, n: 3 }]) {
      const a = episodeSeries(src, source.header, { target: q, td }).td!;
      const b = episodeSeries(cut, clip.header, { target: q, td }).td!;
      for (let t = from; t <= to; t++) expect(b.delta[t - from]).toBe(a.delta[t]);
    }
  });

  it('carries the target snapshots in force and the chosen one, the note, and where it came from', () => {
    for (const [, , id] of cut.weights) if (id) expect(clip.snapshotById(id)).not.toBeNull();
    expect(clip.snapshotById(target.id)).not.toBeNull();
    expect(clip.notes).toEqual([{ episode: ep, from, to, text: 'drift\n\nsee the gap' }]);
    const p = clipProvenance(clip.header)!;
    expect(p).toMatchObject({ source: 'trolley.steps', episode: ep, from, to, context: 3 });
    expect(p.sourceSha256).toBe(createHash('sha256').update(readFileSync(TROLLEY)).digest('hex'));
  });

  it('keeps a 300-step clip of the trolley under 64 KB', () => {
    const long = source.episodes.find((e) => e.length >= 300)!;
    const s2 = new MemorySink();
    writeClip(source, { episode: long.episode, from: 0, to: 299, sourceName: 'trolley.steps', snapshots: [target] }, s2);
    expect(s2.bytes().length).toBeLessThanOrEqual(64 * 1024);
  });
});

describe('a clip page', () => {
  it('escapes the title and keeps script-ending text out of the inline code', () => {
    const html = clipPageHtml({ title: '<img src=x onerror=alert(1)>', name: 'a"b.steps', clip: new Uint8Array([1, 2, 3]), appJs: 'const s = "</script>";', appCss: 'p{}</style>' });
    expect(html).toContain(`<title>${escapeHtml('<img src=x onerror=alert(1)>')} · episcope clip</title>`);
    expect(html).not.toContain('<img src=x');
    expect(html).toContain('data-name="a&quot;b.steps"');
    expect(html.match(/<\/script>/g)).toHaveLength(2);
    expect(html).toContain("default-src 'none'");
  });
});

describe('episcope clip', () => {
  const dir = mkdtempSync(join(tmpdir(), 'ep-clip-'));
  const f = openStepFilePath(TROLLEY);
  const ep = f.episodes.find((e) => e.length > 100)!.episode;
  f.close();

  it('writes a clip step file and a clip page of a 300-step cart-pole segment within the size limits', () => {
    const long = openStepFilePath(TROLLEY).episodes.find((e) => e.length >= 300)!.episode;
    const out = join(dir, 'c.steps');
    const page = join(dir, 'c.html');
    const r = run('clip', TROLLEY, '--episode', String(long), '--from', '0', '--to', '299', '--target', '#target', '--title', 'T', '--note', 'N', '-o', out, '--page', page);
    expect(r.status, r.stderr).toBe(0);
    expect(statSync(out).size).toBeLessThanOrEqual(64 * 1024);
    expect(statSync(page).size).toBeLessThanOrEqual(2 * 1024 * 1024);
  }, 120_000);

  const bad: [string, string[], RegExp, boolean][] = [
    ['a range outside the episode', ['--episode', String(ep), '--from', '0', '--to', '100000'], /outside episode/, true],
    ['an empty range', ['--episode', String(ep), '--from', '9', '--to', '3'], /is empty/, true],
    ['an unknown episode', ['--episode', '99999', '--from', '0', '--to', '1'], /no episode 99999/, true],
    ['an unknown snapshot', ['--episode', String(ep), '--from', '0', '--to', '1', '--target', '#ffffffffff'], /ffffffffff/, true],
    ['no output', ['--episode', String(ep), '--from', '0', '--to', '1'], /-o OUT.steps and\/or --page OUT.html/, false],
    ['a missing --from', ['--episode', String(ep), '--to', '1'], /--from is required/, true],
  ];
  it.each(bad)('refuses %s with one line and exit code 2, leaving the source as it was', (_w, args, message, withOutput) => {
    const before = createHash('sha256').update(readFileSync(TROLLEY)).digest('hex');
    const out = join(dir, `bad-${Math.random()}.steps`);
    const r = run('clip', TROLLEY, ...args, ...(withOutput ? ['-o', out] : []));
    expect(r.status).toBe(2);
    expect(r.stderr.trimEnd().split('\n')).toHaveLength(1);
    expect(r.stderr).toMatch(message);
    expect(existsSync(out)).toBe(false);
    expect(createHash('sha256').update(readFileSync(TROLLEY)).digest('hex')).toBe(before);
  });

  it('never writes over its source', () => {
    const r = run('clip', TROLLEY, '--episode', String(ep), '--from', '0', '--to', '1', '-o', TROLLEY);
    expect(r.status).toBe(2);
    expect(r.stderr).toMatch(/never overwrites its source/);
  });
});

/** `episcope summary FILE [--json]`: one row per episode plus the header's facts. */
import { episodeFacts, type EpisodeFacts } from '../analysis/episode-facts.ts';
import { parse } from './args.ts';
import { fixed, table } from './format.ts';
import type { CommandIO } from './io.ts';
import { openForCommand, recoveryLines } from './open.ts';
import type { StepFile } from '../../formats/reader.ts';

export const summaryUsage = 'episcope summary FILE… [--json]';

export interface FileSummary {
  file: string;
  bytes: number;
  header: StepFile['header'];
  steps: number;
  recovery: StepFile['recovery'];
  snapshots: { role: string; id: string; trainingStep: number }[];
  episodes: EpisodeFacts[];
}

export function summarise(file: StepFile): FileSummary {
  const A = file.header.actions.length;
  return {
    file: file.name,
    bytes: file.size,
    header: file.header,
    steps: file.totalSteps,
    recovery: file.recovery,
    snapshots: file.snapshots.map((s) => ({ role: s.role, id: s.id, trainingStep: s.trainingStep })),
    episodes: file.episodes.map((e) => episodeFacts(file.readEpisode(e.episode), A)),
  };
}

export function summaryCommand(argv: string[], io: CommandIO): void {
  const { values, positionals } = parse('summary', argv, { json: { type: 'boolean' } }, { min: 1, max: Infinity, names: 'a step file: ' + summaryUsage });
  // Open every file first, so that a bad name fails before any output.
  const files = positionals.map((p) => openForCommand('summary', p));
  try {
    const all = files.map(summarise);
    if (values.json) io.out(JSON.stringify(all.length === 1 ? all[0] : all, jsonReplacer, 1) + '\n');
    else io.out(all.map(renderSummary).join('\n\n') + '\n');
  } finally {
    for (const f of files) f.close();
  }
}

/** JSON cannot hold NaN or ±Infinity: name them as strings rather than hide them as null. */
export function jsonReplacer(_key: string, v: unknown): unknown {
  if (typeof v === 'number' && !Number.isFinite(v)) return String(v);
  if (ArrayBuffer.isView(v) && !(v instanceof DataView)) return Array.from(v as Float32Array, (x) => (Number.isFinite(x) ? x : String(x)));
  return v;
}

const shortIds = (ids: string[]) => (ids.length === 0 ? '–' : ids.length === 1 ? ids[0].slice(0, 8) : `${ids[0].slice(0, 8)} +${ids.length - 1}`);

function renderSummary(s: FileSummary): string {
  const h = s.header;
  const modes = new Map<string, number>();
  for (const e of s.episodes) modes.set(e.mode || 'unended', (modes.get(e.mode || 'unended') ?? 0) + 1);
  const roles = { online: 0, target: 0 } as Record<string, number>;
  for (const sn of s.snapshots) roles[sn.role]++;
  const lines = [
    `file      ${s.file} (${s.bytes.toLocaleString('en')} bytes, format version ${h.version}${s.recovery.indexed ? ', closed properly' : ''})`,
    `system    ${h.system.kind}${h.system.title && h.system.title !== h.system.kind ? ` (${h.system.title})` : ''}; γ = ${h.gamma}`,
    `state     ${h.stateDims.map((d) => `${d.name} [${d.unit}]`).join(', ')}`,
    `actions   ${h.actions.map((a, i) => `${i} ${a}`).join(', ')}`,
    `steps     ${s.steps.toLocaleString('en')} in ${s.episodes.length} episodes (${[...modes].map(([m, n]) => `${n} ${m}`).join(', ') || 'none'})`,
    `snapshots ${s.snapshots.length} (${roles.online} online, ${roles.target} target)`,
  ];
  if (h.extras.length) lines.push(`extras    ${h.extras.join(', ')}`);
  if (Object.keys(h.run).length) lines.push(`run       ${JSON.stringify(h.run)}`);
  for (const l of recoveryLines(fileLike(s))) lines.push(`!         ${l}`);
  lines.push('');
  const rows = s.episodes.map((e) => [
    String(e.episode),
    e.mode || '–',
    String(e.steps),
    fixed(e.return, 3),
    e.outcome + (e.failed ? ' (fail)' : ''),
    e.reason || '–',
    fixed(e.minQ, 3),
    fixed(e.maxQ, 3),
    String(e.nonFiniteQ + e.nonFiniteReward),
    String(e.greedyFlips),
    shortIds(e.onlineIds),
    shortIds(e.targetIds),
  ]);
  lines.push(table(['episode', 'mode', 'steps', 'return', 'outcome', 'reason', 'min Q', 'max Q', 'non-finite', 'flips', 'online', 'target'], rows));
  return lines.join('\n');
}

// recoveryLines wants the file's counts; the summary already has them.
function fileLike(s: FileSummary) {
  return { recovery: s.recovery, totalSteps: s.steps, episodes: s.episodes } as unknown as StepFile;
}

/** `episcope td FILE --target SNAP …`: TD targets and errors step by step, with every piece. */
import { StepFileError } from '../../formats/errors.ts';
import { episodeSeries, type EpisodeSeries } from '../analysis/series.ts';
import { targetTimeline } from '../analysis/target-age.ts';
import { UsageError, intFlag, parse } from './args.ts';
import { SIGN_CONVENTION, describeNet, loadNet, tdFlags, tdOptionsFrom } from './analysis-setup.ts';
import { fixed, table } from './format.ts';
import type { CommandIO } from './io.ts';
import { openForCommand, recoveryLines } from './open.ts';
import { jsonReplacer } from './summary.ts';

import { tdUsage } from './usage.ts';
export { tdUsage };

export async function tdCommand(argv: string[], io: CommandIO): Promise<void> {
  const { values, positionals } = parse(
    'td',
    argv,
    { target: { type: 'string' }, online: { type: 'string' }, episode: { type: 'string' }, json: { type: 'boolean' }, ...tdFlags },
    { min: 1, max: 1, names: 'a step file: ' + tdUsage },
  );
  if (values.target === undefined) throw new UsageError(`episcope td: --target SNAP is required (a step file, FILE#target, FILE#<id>, or a model folder)`);
  const td = tdOptionsFrom('td', values);
  const episodeArg = intFlag('td', values, 'episode');
  const file = openForCommand('td', positionals[0]);
  try {
    if (episodeArg !== undefined) file.episode(episodeArg);
  } catch (e) {
    file.close();
    if (e instanceof StepFileError) throw new UsageError(`episcope td: ${e.message}`);
    throw e;
  }
  try {
    const target = await loadNet('td', String(values.target), file);
    const online = values.online === undefined ? null : await loadNet('td', String(values.online), file);
    const gamma = td.gamma ?? file.header.gamma;
    const ages = targetTimeline(file).age;
    const episodes = episodeArg === undefined ? file.episodes.map((e) => e.episode) : [episodeArg];
    const results = episodes.map((ep) => {
      const steps = file.readEpisode(ep);
      return { steps, series: episodeSeries(steps, file.header, { target: target.q, online: online?.q ?? null, td: { ...td, gamma } }) };
    });
    const meta = {
      file: file.name,
      signConvention: SIGN_CONVENTION,
      rule: td.rule,
      n: td.rule === 'nstep' ? td.n : null,
      gamma,
      truncation: td.truncation,
      target: { ...target.snapshot, layers: undefined, backend: target.evaluator.backend, note: target.evaluator.note },
      online: online ? { ...online.snapshot, layers: undefined, backend: online.evaluator.backend } : null,
      recovery: file.recovery,
    };
    if (values.json) {
      const doc = {
        ...meta,
        episodes: results.map(({ steps, series }) => ({ episode: steps.episode, ...(episodeArg === undefined ? episodeTotals(series) : { steps: stepRows(series, steps.step, ages.get(steps.episode)!) }) })),
      };
      io.out(JSON.stringify(doc, jsonReplacer, 1) + '\n');
      return;
    }
    const lines = [
      `file        ${file.name}`,
      `target      ${describeNet('', target).trim()}`,
      ...(online ? [`online      ${describeNet('', online).trim()} (Q recomputed from it)`] : []),
      `rule        ${td.rule}${td.rule === 'nstep' ? ` with n = ${td.n}` : ''}, γ = ${gamma}, truncated steps ${td.truncation === 'bootstrap' ? 'bootstrap (not terminal)' : 'treated as terminal'}`,
      `sign        ${SIGN_CONVENTION}`,
      ...recoveryLines(file).map((l) => `!           ${l}`),
      '',
    ];
    if (episodeArg === undefined) {
      lines.push(
        table(
          ['episode', 'mode', 'steps', 'mean |δ|', 'max |δ|', 'at step', 'clipped', 'mean Huber', 'bootstrapped'],
          results.map(({ steps, series }) => {
            const t = episodeTotals(series);
            return [String(steps.episode), steps.end?.mode ?? '–', String(steps.n), fixed(t.meanAbsDelta, 4), fixed(t.maxAbsDelta, 4), t.maxAbsDeltaStep === null ? '–' : String(t.maxAbsDeltaStep), `${t.clipped}`, fixed(t.meanHuber, 4), String(t.bootstrapped)];
          }),
        ),
      );
    } else {
      const { steps, series } = results[0];
      const rows = stepRows(series, steps.step, ages.get(steps.episode)!);
      lines.push(
        table(
          ['step', 'action', 'r', 'discount', 'bootstrap', 'y', 'Q(s,a)', 'δ', 'δ²', 'Huber', 'clip', 'G', 'Q−G', 'gap', 'flip', 'target age'],
          rows.map((r) => [
            String(r.step),
            `${file.header.actions[r.action] ?? r.action}`,
            fixed(r.reward, 4),
            fixed(r.discount, 4),
            r.bootstrapped ? fixed(r.bootstrap, 4) : '–',
            fixed(r.target, 4),
            fixed(r.q, 4),
            fixed(r.delta, 4),
            fixed(r.squared, 4),
            fixed(r.huber, 4),
            r.clipped ? 'yes' : '–',
            fixed(r.return, 4),
            fixed(r.valueError, 4),
            fixed(r.gap, 4),
            r.flip ? 'flip' : '–',
            String(r.targetAge),
          ]),
        ),
      );
      if (series.returnIsLowerHorizon) lines.push(`(G is a lower horizon: episode ${steps.episode} was ${steps.end?.outcome ?? 'not ended'}, so its return is cut off)`);
    }
    io.out(lines.join('\n') + '\n');
    target.evaluator.dispose();
    online?.evaluator.dispose();
  } finally {
    file.close();
  }
}

export function stepRows(s: EpisodeSeries, step: Uint32Array, targetAge: Uint32Array) {
  const td = s.td!;
  return Array.from({ length: s.n }, (_, t) => ({
    step: step[t],
    action: s.actions[t],
    reward: td.reward[t],
    discount: td.discount[t],
    bootstrap: td.bootstrap[t],
    bootstrapped: td.bootstrapped[t] === 1,
    rewardSum: td.rewardSum[t],
    target: td.target[t],
    q: td.qTaken[t],
    delta: td.delta[t],
    squared: td.squared[t],
    huber: td.huber[t],
    clipped: td.clipped[t] === 1,
    return: s.returns[t],
    valueError: s.valueError[t],
    greedy: s.greedy[t],
    flip: s.flips[t] === 1,
    gap: s.gap[t],
    maxQ: s.maxQ[t],
    targetAge: targetAge[t],
  }));
}

export function episodeTotals(s: EpisodeSeries) {
  const td = s.td!;
  let sumAbs = 0;
  let sumHuber = 0;
  let finite = 0;
  let max = -1;
  let at: number | null = null;
  let clipped = 0;
  let bootstrapped = 0;
  for (let t = 0; t < s.n; t++) {
    const d = Math.abs(td.delta[t]);
    clipped += td.clipped[t];
    bootstrapped += td.bootstrapped[t];
    if (!Number.isFinite(d)) continue;
    finite++;
    sumAbs += d;
    sumHuber += td.huber[t];
    if (d > max) {
      max = d;
      at = t;
    }
  }
  return {
    steps: s.n,
    meanAbsDelta: finite ? sumAbs / finite : null,
    maxAbsDelta: at === null ? null : max,
    maxAbsDeltaStep: at,
    clipped,
    meanHuber: finite ? sumHuber / finite : null,
    bootstrapped,
    nonFiniteDelta: s.n - finite,
  };
}

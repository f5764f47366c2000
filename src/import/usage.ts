/**
 * Usage lines of `episcope import` and `episcope snapshot import`, apart from the commands, so the
 * CLI's help text loads none of the importer. The fields are those of fields.ts.
 */
export const importUsage =
  'episcope import LOG.jsonl|LOG.csv -o OUT.steps [--state-dims a,b,…] [--units m,m/s,…] [--actions left,right,…] [--gamma G] [--system KIND] [--skip-bad] [--compress] [--force]';

/** Continuation lines are indented to sit under the first in the command list of `episcope --help`. */
export const importWhat = [
  'a JSON Lines or CSV log, one step a line, into a step file (written whole or not at all)',
  '      fields: episode, step, state (CSV: state.0 … or the --state-dims names), action (index or --actions name),',
  '      reward, terminal, truncated, q (CSV: q.0 … or q.<action>); optional: explored, epsilon; read from an',
  '      episode\'s last line: failed, final_state, final_q, mode, reason. NaN and ±Infinity as "NaN", "Infinity", "-Infinity"',
].join('\n');

export const snapshotUsage = 'episcope snapshot import MODEL_DIR -o OUT.steps --role target|online [--step N] [--state-dims a,b,…] [--actions left,right,…] [--gamma G] [--force]';

export const snapshotWhat = 'a TensorFlow.js layers-model folder into a step file holding one snapshot, for td/suspects --target OUT.steps';

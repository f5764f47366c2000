/**
 * `episcope snapshot import MODEL_DIR -o OUT.steps --role target|online [--step N] …`: a network
 * trained elsewhere (a TensorFlow.js layers-model folder) into a step file with one snapshot, so
 * `episcope td FILE --target OUT.steps` can judge a recording against it.
 */
import { ImportError } from '../import/errors.ts';
import { DEFAULT_GAMMA } from '../import/header.ts';
import { importSnapshot } from '../import/snapshot.ts';
import { snapshotUsage } from '../import/usage.ts';
import { ModelFolderError } from '../net/model-json.ts';
import { UsageError, intFlag, numberFlag, parse } from './args.ts';
import { listFlag } from './import.ts';
import type { CommandIO } from './io.ts';

export { snapshotUsage };

/** `argv` starts with the sub-command: `import`. */
export async function snapshotCommand(argv: string[], io: CommandIO): Promise<void> {
  const [sub, ...rest] = argv;
  if (sub !== 'import') {
    throw new UsageError(`episcope snapshot: ${sub === undefined ? 'expected a sub-command' : `unknown sub-command "${sub}"`}; there is one: ${snapshotUsage}`);
  }
  const command = 'snapshot import';
  const { values, positionals } = parse(
    command,
    rest,
    {
      out: { type: 'string', short: 'o' },
      role: { type: 'string' },
      step: { type: 'string' },
      'state-dims': { type: 'string' },
      actions: { type: 'string' },
      gamma: { type: 'string' },
      force: { type: 'boolean' },
    },
    { min: 1, max: 1, names: 'a model folder: ' + snapshotUsage },
  );
  if (values.out === undefined) throw new UsageError(`episcope ${command}: -o OUT.steps is required (${snapshotUsage})`);
  const role = values.role === undefined ? undefined : String(values.role);
  if (role === undefined) throw new UsageError(`episcope ${command}: --role target|online is required: which network the weights are`);
  if (role !== 'target' && role !== 'online') throw new UsageError(`episcope ${command}: --role "${role}" is not target or online`);
  const trainingStep = intFlag(command, values, 'step') ?? 0;
  const gamma = numberFlag(command, values, 'gamma', 0, 1);
  let result;
  try {
    result = await importSnapshot({
      folder: positionals[0],
      out: String(values.out),
      role,
      trainingStep,
      stateDims: listFlag(values, 'state-dims'),
      actions: listFlag(values, 'actions'),
      gamma: gamma ?? null,
      force: values.force === true,
    });
  } catch (e) {
    if (e instanceof ImportError || e instanceof ModelFolderError) throw new UsageError(`episcope ${command}: ${e.message}`);
    throw e;
  }
  if (result.gammaDefaulted) io.err(`episcope ${command}: no --gamma given; the header says γ = ${DEFAULT_GAMMA} (td takes γ from the recording, not from this file)\n`);
  io.out(
    `wrote ${result.out} (${result.bytes.toLocaleString('en')} bytes): the ${role} network ${result.sizes}, id ${result.id}, training step ${trainingStep}; ` +
      `use it as: episcope td FILE --target ${result.out}\n`,
  );
}

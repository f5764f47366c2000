/**
 * A target network picked in the browser: a step file (its last target snapshot, else its last
 * snapshot) or a model folder's files (model.json and its weight files). Errors say which file and
 * what was expected, and a network that does not fit the open recording is refused with both sizes.
 */
import { openStepFile } from '../../formats/reader.ts';
import { bytesSource } from '../../formats/source.ts';
import type { Header } from '../../formats/types.ts';
import { denseLayersFromModelJson } from '../../src/net/model-json.ts';
import { checkSnapshotFits } from '../../src/net/fit.ts';
import type { TargetNet } from '../worker/protocol.ts';

export async function loadTargetFiles(files: File[], header: Header | null): Promise<TargetNet> {
  const json = files.find((f) => f.name === 'model.json' || f.webkitRelativePath.endsWith('/model.json'));
  let net: TargetNet;
  if (json) {
    const parsed = JSON.parse(await json.text());
    const bytes = new Map<string, Uint8Array>();
    for (const f of files) if (f !== json) bytes.set(f.name, new Uint8Array(await f.arrayBuffer()));
    const layers = denseLayersFromModelJson(parsed, json.name, (path) => {
      const b = bytes.get(path.split('/').pop()!);
      if (!b) throw new Error(`${path}: model.json names this weight file; pick it together with model.json`);
      return b;
    });
    net = { source: `${json.webkitRelativePath || json.name} (model folder)`, id: 'model', layers };
  } else {
    const file = files[0];
    if (!file) throw new Error('no file picked');
    const steps = openStepFile(bytesSource(new Uint8Array(await file.arrayBuffer())), file.name);
    const refs = steps.snapshots;
    const ref = [...refs].reverse().find((s) => s.role === 'target') ?? refs[refs.length - 1];
    if (!ref) throw new Error(`${file.name}: holds no snapshots; expected a step file with a target snapshot, or a model folder`);
    net = { source: `${file.name}#${ref.role} (training step ${ref.trainingStep}, id ${ref.id})`, id: ref.id, layers: steps.readSnapshot(ref).layers };
  }
  if (header) checkSnapshotFits(net.layers, header, net.source);
  return net;
}

import * as tf from '@tensorflow/tfjs';
import { mkdirSync, mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { SnapshotRef } from '../../formats/index-record.ts';
import { openStepFilePath } from '../../formats/node.ts';
import { openStepFile, type StepFile } from '../../formats/reader.ts';
import { snapshotId } from '../../formats/snapshot-id.ts';
import { bytesSource } from '../../formats/source.ts';
import { FORMAT_VERSION, type DenseLayer, type Header } from '../../formats/types.ts';
import { StepFileWriter } from '../../formats/writer.ts';
import { checkSnapshotFits, loadSnapshotSpec, pickSnapshot } from '../../src/net/snapshot-source.ts';

const TROLLEY = fileURLToPath(new URL('../../samples/trolley.steps', import.meta.url));
const ROVER = fileURLToPath(new URL('../../samples/rover.steps', import.meta.url));

let trolley: StepFile;
let refs: readonly SnapshotRef[];
let root: string;
beforeAll(() => {
  trolley = openStepFilePath(TROLLEY);
  refs = trolley.snapshots;
  root = mkdtempSync(join(tmpdir(), 'episcope-snap-'));
});
afterAll(() => {
  trolley.close();
  rmSync(root, { recursive: true, force: true });
});

/** The expected picks, worked out here from the file's own list, in file order. */
const lastOf = (list: readonly SnapshotRef[]) => list[list.length - 1];
const targets = () => refs.filter((r) => r.role === 'target');
const onlines = () => refs.filter((r) => r.role === 'online');
const distinctIds = () => [...new Set(refs.map((r) => r.id))];
const unusedPrefix = () => ['dead', 'beef', 'f00d', 'cafe', '0000'].find((p) => !refs.some((r) => r.id.startsWith(p)))!;

describe('loadSnapshotSpec on samples/trolley.steps', () => {
  it('the sample has snapshots of both roles, in training-step order (what the picks below assume)', () => {
    expect(targets().length).toBeGreaterThan(2);
    expect(onlines().length).toBeGreaterThan(0);
    expect(refs.every((r, i) => i === 0 || r.trainingStep >= refs[i - 1].trainingStep)).toBe(true);
  });

  it('FILE alone is the last target snapshot; its layers are the ones the file holds under that id', async () => {
    const expected = lastOf(targets());
    const got = await loadSnapshotSpec(TROLLEY, null);
    expect([got.id, got.role, got.trainingStep]).toEqual([expected.id, 'target', expected.trainingStep]);
    expect(snapshotId(got.layers)).toBe(expected.id);
    expect(got.source).toBe(`${TROLLEY} (target, training step ${expected.trainingStep}, id ${expected.id})`);
  });

  it('#target and #online pick the last of that role, in a named file and in the open recording', async () => {
    for (const role of ['target', 'online'] as const) {
      const expected = lastOf(role === 'target' ? targets() : onlines());
      const named = await loadSnapshotSpec(`${TROLLEY}#${role}`, null);
      const own = await loadSnapshotSpec(`#${role}`, trolley);
      for (const got of [named, own]) {
        expect([got.id, got.role, got.trainingStep]).toEqual([expected.id, role, expected.trainingStep]);
        expect(snapshotId(got.layers)).toBe(expected.id);
      }
      expect(own.source).toBe(`${TROLLEY}#${role} (${role}, training step ${expected.trainingStep}, id ${expected.id})`);
    }
  });

  it('#<id> and #<unique prefix of ≥ 4 hex digits> pick the last record with that id', async () => {
    const id = targets()[3].id;
    const prefix = id.slice(0, 6);
    expect(distinctIds().filter((d) => d.startsWith(prefix))).toEqual([id]);
    const expected = lastOf(refs.filter((r) => r.id === id));
    for (const spec of [`#${id}`, `#${prefix}`, `#${prefix.toUpperCase()}`]) {
      const got = await loadSnapshotSpec(spec, trolley);
      expect([spec, got.id, got.role, got.trainingStep]).toEqual([spec, id, expected.role, expected.trainingStep]);
    }
  });

  it('#step=N picks the last target snapshot at or before training step N', async () => {
    const t = targets();
    const k = Math.floor(t.length / 2);
    for (const n of [t[k].trainingStep, t[k].trainingStep + 1, t[k + 1].trainingStep - 1, t[k + 1].trainingStep]) {
      const expected = lastOf(t.filter((r) => r.trainingStep <= n));
      const got = await loadSnapshotSpec(`#step=${n}`, trolley);
      expect([n, got.id, got.trainingStep]).toEqual([n, expected.id, expected.trainingStep]);
    }
    const past = await loadSnapshotSpec(`#step=${Number.MAX_SAFE_INTEGER}`, trolley);
    expect(past.id).toBe(lastOf(t).id);
  });

  it('pickSnapshot combines role, id and step; refuses a prefix shared by two ids', () => {
    expect(pickSnapshot(trolley, {})).toBe(refs.reduce((a, b) => (b.trainingStep >= a.trainingStep ? b : a)));
    const t = targets();
    expect(pickSnapshot(trolley, { role: 'target', atOrBeforeStep: t[2].trainingStep })).toBe(t[2]);
    expect(pickSnapshot(trolley, { role: 'online', id: t[2].id })).toBe(lastOf(onlines().filter((r) => r.id === t[2].id)) ?? null);
    expect(pickSnapshot(trolley, { id: unusedPrefix() })).toBe(null);
    expect(pickSnapshot(trolley, { atOrBeforeStep: -1 })).toBe(null);
    // The shortest shared prefix in the sample: found here, whatever the weights happen to be.
    const ids = distinctIds();
    let shared = '';
    for (let len = 1; !shared && len <= 16; len++) {
      const seen = new Set<string>();
      for (const id of ids) {
        const p = id.slice(0, len);
        if (seen.has(p)) {
          shared = p;
          break;
        }
        seen.add(p);
      }
    }
    expect(shared).not.toBe('');
    const clashing = ids.filter((id) => id.startsWith(shared));
    expect(() => pickSnapshot(trolley, { id: shared })).toThrow(`${trolley.name}: id prefix "${shared}" matches ${clashing.length} snapshot ids (${clashing.slice(0, 5).join(', ')}`);
  });

  it('refuses an unknown id, a too-short prefix and a fragment it does not know, naming the spec and what exists', async () => {
    const unused = unusedPrefix();
    const online = onlines().length;
    const overview = `the file holds ${refs.length} snapshots with ${distinctIds().length} distinct ids: ${online} online, ${refs.length - online} target, training steps ${refs[0].trainingStep} to ${lastOf(refs).trainingStep}`;
    await expect(loadSnapshotSpec(`${TROLLEY}#${unused}`, null)).rejects.toThrow(`${TROLLEY}#${unused}: no snapshot id starts with "${unused}" (${overview})`);
    await expect(loadSnapshotSpec('#b7', trolley)).rejects.toThrow(`${TROLLEY}#b7: an id prefix needs at least 4 hex digits, "b7" has 2`);
    await expect(loadSnapshotSpec('#step=-5', trolley)).rejects.toThrow(`${TROLLEY}#step=-5: "-5" is not a training step; expected #step=N with N a whole number ≥ 0`);
    await expect(loadSnapshotSpec('#latest', trolley)).rejects.toThrow(`${TROLLEY}#latest: "#latest" is not a snapshot; expected #target, #online, #step=N or #<id or ≥ 4 hex digits of one>`);
  });

  it('refuses the #… forms without an open recording, and files or folders that are not there', async () => {
    await expect(loadSnapshotSpec('#target', null)).rejects.toThrow('#target: names a snapshot in the recording itself, but no recording is open here; give FILE.steps#target');
    const missing = join(root, 'nowhere.steps');
    await expect(loadSnapshotSpec(`${missing}#target`, null)).rejects.toThrow(`${missing}#target: ${missing} does not exist; expected a step file (FILE.steps, FILE.steps#…) or a folder holding model.json`);
    const folder = join(root, 'not-a-model');
    mkdirSync(folder);
    writeFileSync(join(folder, 'readme.txt'), '');
    await expect(loadSnapshotSpec(folder, null)).rejects.toThrow(`${folder}: the folder has no model.json; expected a TensorFlow.js layers-model folder or a step file (it holds: readme.txt)`);
    await expect(loadSnapshotSpec(`${folder}#target`, null)).rejects.toThrow(`${folder}#target: #target picks a snapshot in a step file, but ${folder} is a folder`);
  });
});

/** A step file holding exactly the snapshots given, for cases the sample cannot show. */
function craftedRecording(snapshots: { role: 'online' | 'target'; trainingStep: number; layers: DenseLayer[] }[]): Uint8Array {
  const chunks: Uint8Array[] = [];
  const header: Header = {
    version: FORMAT_VERSION,
    stateDims: [{ name: 'bias', unit: '' }],
    actions: ['only'],
    gamma: 0.9,
    system: { kind: 'none', map: {} },
    extras: [],
    run: { purpose: 'net tests' },
  };
  const writer = new StepFileWriter({ write: (b) => chunks.push(b.slice()), close: () => {} }, header, false);
  for (const s of snapshots) writer.writeSnapshot({ ...s, id: snapshotId(s.layers) });
  writer.finish();
  const out = new Uint8Array(chunks.reduce((n, c) => n + c.length, 0));
  let at = 0;
  for (const c of chunks) {
    out.set(c, at);
    at += c.length;
  }
  return out;
}

const oneWeight = (w: number): DenseLayer[] => [{ inputs: 1, outputs: 1, activation: 'linear', weights: Float32Array.of(w), bias: Float32Array.of(0) }];

describe('loadSnapshotSpec on a crafted recording', () => {
  let clash: [DenseLayer[], DenseLayer[]];
  let crafted: StepFile;
  let path: string;
  beforeAll(() => {
    // Two networks whose ids share their first 4 hex digits: by the birthday bound a few hundred
    // tries of 16 bits find one.
    const byPrefix = new Map<string, number>();
    for (let w = 1; ; w++) {
      const p = snapshotId(oneWeight(w)).slice(0, 4);
      const other = byPrefix.get(p);
      if (other !== undefined) {
        clash = [oneWeight(other), oneWeight(w)];
        break;
      }
      byPrefix.set(p, w);
    }
    const bytes = craftedRecording([
      { role: 'target', trainingStep: 100, layers: clash[0] },
      { role: 'target', trainingStep: 200, layers: clash[1] },
    ]);
    path = join(root, 'crafted.steps');
    writeFileSync(path, bytes);
    crafted = openStepFile(bytesSource(bytes), 'crafted.steps');
  });

  it('an id prefix of 4 digits that starts two ids is refused, listing both', async () => {
    const [a, b] = clash.map(snapshotId);
    const prefix = a.slice(0, 4);
    await expect(loadSnapshotSpec(`#${prefix}`, crafted)).rejects.toThrow(`crafted.steps#${prefix}: id prefix "${prefix}" matches 2 snapshot ids (${a}, ${b}); give more digits`);
    expect((await loadSnapshotSpec(`${path}#${b.slice(0, 8)}`, null)).trainingStep).toBe(200);
  });

  it('a role the file does not have, and a step before its first target snapshot, are refused with what it has', async () => {
    await expect(loadSnapshotSpec('#online', crafted)).rejects.toThrow('crafted.steps#online: the file has no online snapshot (the file holds 2 snapshots with 2 distinct ids: 0 online, 2 target, training steps 100 to 200)');
    await expect(loadSnapshotSpec('#step=99', crafted)).rejects.toThrow('crafted.steps#step=99: no target snapshot at or before training step 99 (the earliest is at training step 100)');
  });

  it('FILE alone falls back to the last snapshot of any role when there is no target snapshot', async () => {
    const onlineOnly = join(root, 'online-only.steps');
    writeFileSync(onlineOnly, craftedRecording([{ role: 'online', trainingStep: 5, layers: oneWeight(2) }, { role: 'online', trainingStep: 9, layers: oneWeight(3) }]));
    const got = await loadSnapshotSpec(onlineOnly, null);
    expect([got.role, got.trainingStep, got.id]).toEqual(['online', 9, snapshotId(oneWeight(3))]);
  });
});

describe('loadSnapshotSpec on a model folder', () => {
  it('reads the folder (or its model.json) and gives the id its layers would have in a step file', async () => {
    expect(await tf.setBackend('cpu')).toBe(true);
    const model = tf.sequential({ layers: [tf.layers.dense({ units: 3, inputShape: [4], activation: 'relu' }), tf.layers.dense({ units: 2 })] });
    const dir = join(root, 'model');
    mkdirSync(dir);
    await model.save(tf.io.withSaveHandler(async (a) => {
      writeFileSync(join(dir, 'model.json'), JSON.stringify({ format: 'layers-model', modelTopology: a.modelTopology, weightsManifest: [{ paths: ['w.bin'], weights: a.weightSpecs }] }));
      writeFileSync(join(dir, 'w.bin'), new Uint8Array(tf.io.CompositeArrayBuffer.join(a.weightData)));
      return { modelArtifactsInfo: { dateSaved: new Date(), modelTopologyType: 'JSON' } };
    }));
    model.dispose();
    for (const spec of [dir, join(dir, 'model.json')]) {
      const got = await loadSnapshotSpec(spec, null);
      expect([got.role, got.trainingStep, got.id]).toEqual([null, null, snapshotId(got.layers)]);
      expect(got.source).toBe(`${spec} (TensorFlow.js layers model 4→3→2, id ${got.id})`);
    }
  });
});

describe('checkSnapshotFits', () => {
  const trolleyHeader = { stateDims: ['x', 'x_dot', 'theta', 'theta_dot'].map((name) => ({ name, unit: '' })), actions: ['push left', 'push right'] };
  const sized = (inputs: number, outputs: number): DenseLayer[] => [
    { inputs, outputs: 3, activation: 'relu', weights: new Float32Array(inputs * 3), bias: new Float32Array(3) },
    { inputs: 3, outputs, activation: 'linear', weights: new Float32Array(3 * outputs), bias: new Float32Array(outputs) },
  ];

  it('names both sizes and the state dimensions when the inputs differ, and the actions when the outputs differ', () => {
    expect(() => checkSnapshotFits(sized(4, 2), trolleyHeader, 'x')).not.toThrow();
    expect(() => checkSnapshotFits(sized(6, 2), trolleyHeader, 'samples/x.steps#target')).toThrow(
      "samples/x.steps#target: the network takes 6 inputs but the recording's state has 4 dimensions (x, x_dot, theta, theta_dot)",
    );
    expect(() => checkSnapshotFits(sized(4, 3), trolleyHeader, 'm')).toThrow('m: the network gives 3 Q-values per state but the recording has 2 actions (push left, push right)');
  });

  it('refuses the trolley network for the rover recording, naming both mismatches', async () => {
    const rover = openStepFilePath(ROVER);
    const snap = await loadSnapshotSpec(`${TROLLEY}#target`, null);
    try {
      expect(() => checkSnapshotFits(snap.layers, rover.header, snap.source)).toThrow(
        `${snap.source}: the network takes 4 inputs but the recording's state has 2 dimensions (x, v); and the network gives 2 Q-values per state but the recording has 3 actions (reverse, coast, forward)`,
      );
      expect(() => checkSnapshotFits(snap.layers, trolley.header, snap.source)).not.toThrow();
    } finally {
      rover.close();
    }
  });
});

/**
 * Bad input to the recorder is refused with a RecordError that names the call, the field, the
 * value and what was expected; and the refused call changes nothing, so recording can go on and
 * the file holds exactly the calls that were accepted.
 */
import { describe, expect, it } from 'vitest';
import { openStepFile } from '../../formats/reader.ts';
import { bytesSource } from '../../formats/source.ts';
import { ACTIVATIONS, type DenseLayer } from '../../formats/types.ts';
import { RecordError } from '../../src/record/errors.ts';
import { MemorySink } from '../../src/record/memory-sink.ts';
import { createRecorder } from '../../src/record/recorder.ts';
import type { ByteSink } from '../../formats/writer.ts';
import { MirroredRecording, bitsOf, expectedColumns } from './mirror.ts';

const HEADER = {
  stateDims: [
    { name: 'position', unit: 'm' },
    { name: 'angle', unit: 'rad' },
  ],
  actions: ['push left', 'push right'],
  gamma: 0.99,
  system: { kind: 'cart-pole', map: { position: 0, angle: 1 } },
  extras: ['tdError'],
};

const LAYERS: DenseLayer[] = [
  { inputs: 2, outputs: 3, activation: 'relu', weights: new Float32Array(6).fill(0.5), bias: new Float32Array(3) },
  { inputs: 3, outputs: 2, activation: 'linear', weights: new Float32Array(6).fill(-1), bias: Float32Array.of(1, 2) },
];

const good = (t: number) => ({ state: [t, -t], action: t % 2, reward: 1, q: [t, t + 1], extras: { tdError: t / 2 } });

function refusal(call: () => unknown): RecordError {
  try {
    call();
  } catch (e) {
    expect(e).toBeInstanceOf(RecordError);
    return e as RecordError;
  }
  throw new Error('expected the call to be refused');
}

type Case = [what: string, badCall: (m: MirroredRecording) => unknown, message: string, field: string];

const CASES: Case[] = [
  ['a state of the wrong length', (m) => m.recorder.step({ ...good(9), state: [1, 2, 3] }), "step: state has 3 values; expected 2 (the header's state dimensions)", 'state'],
  ['a missing state', (m) => m.recorder.step({ ...good(9), state: undefined as unknown as number[] }), "step: state has no values; expected 2 (the header's state dimensions)", 'state'],
  ['Q of the wrong length', (m) => m.recorder.step({ ...good(9), q: [1] }), 'step: q has 1 values; expected 2 (one per action)', 'q'],
  ['a non-integer action', (m) => m.recorder.step({ ...good(9), action: 1.5 }), 'step: action is 1.5; expected a whole number in 0..1', 'action'],
  ['an action equal to the number of actions', (m) => m.recorder.step({ ...good(9), action: 2 }), 'step: action is 2; expected a whole number in 0..1', 'action'],
  ['a negative action', (m) => m.recorder.step({ ...good(9), action: -1 }), 'step: action is -1; expected a whole number in 0..1', 'action'],
  ['a NaN action', (m) => m.recorder.step({ ...good(9), action: NaN }), 'step: action is NaN; expected a whole number in 0..1', 'action'],
  ['a reward that is not a number', (m) => m.recorder.step({ ...good(9), reward: '1' as unknown as number }), 'step: reward is string; expected a number', 'reward'],
  ['an ε that is not a number', (m) => m.recorder.step({ ...good(9), epsilon: null as unknown as number }), 'step: epsilon is object; expected a number', 'epsilon'],
  ['an extra column the header does not declare', (m) => m.recorder.step({ ...good(9), extras: { loss: 1 } }), 'step: extras.loss is not a column of this file; the header declares tdError', 'extras.loss'],
  ['an extra column value that is not a number', (m) => m.recorder.step({ ...good(9), extras: { tdError: 'big' as unknown as number } }), 'step: extras.tdError is string; expected a number', 'extras.tdError'],
  ['a final state of the wrong length', (m) => m.recorder.endEpisode({ finalState: [1, 2, 3] }), "endEpisode: finalState has 3 values; expected 2 (the header's state dimensions)", 'finalState'],
  ['a final Q of the wrong length', (m) => m.recorder.endEpisode({ finalQ: [1, 2, 3] }), 'endEpisode: finalQ has 3 values; expected 2 (one per action)', 'finalQ'],
  ['an unknown outcome', (m) => m.recorder.endEpisode({ outcome: 'crashed' as 'ended' }), 'endEpisode: outcome is "crashed"; expected terminal, truncated or ended', 'outcome'],
  [
    'a snapshot whose first layer takes the wrong input size',
    (m) => m.recorder.snapshot({ role: 'online', trainingStep: 1, layers: [{ ...LAYERS[0], inputs: 3, weights: new Float32Array(9) }, LAYERS[1]] }),
    "snapshot: layers[0].inputs is 3; expected 2 (the header's state dimensions)",
    'layers[0].inputs',
  ],
  [
    'a snapshot whose last layer gives the wrong output size',
    (m) => m.recorder.snapshot({ role: 'online', trainingStep: 1, layers: [LAYERS[0], { ...LAYERS[1], outputs: 3, weights: new Float32Array(9), bias: new Float32Array(3) }] }),
    'snapshot: layers[1].outputs is 3; expected 2 (one Q-value per action)',
    'layers[1].outputs',
  ],
  [
    'a snapshot whose layers do not chain',
    (m) => m.recorder.snapshot({ role: 'online', trainingStep: 1, layers: [LAYERS[0], { ...LAYERS[1], inputs: 4, weights: new Float32Array(8) }] }),
    "snapshot: layers[1].inputs is 4; expected 3 (the previous layer's outputs)",
    'layers[1].inputs',
  ],
  [
    'a snapshot with an unknown activation',
    (m) => m.recorder.snapshot({ role: 'target', trainingStep: 1, layers: [{ ...LAYERS[0], activation: 'swish' as 'relu' }, LAYERS[1]] }),
    `snapshot: layers[0].activation is "swish"; expected one of ${ACTIVATIONS.join(', ')}`,
    'layers[0].activation',
  ],
  [
    'a snapshot whose weights do not fill the layer',
    (m) => m.recorder.snapshot({ role: 'online', trainingStep: 1, layers: [{ ...LAYERS[0], weights: new Float32Array(5) }, LAYERS[1]] }),
    'snapshot: layers[0].weights has 5 values; expected 2×3 = 6',
    'layers[0].weights',
  ],
  ['a snapshot with no layers', (m) => m.recorder.snapshot({ role: 'online', trainingStep: 1, layers: [] }), 'snapshot: layers is empty; expected at least one dense layer', 'layers'],
  ['a snapshot with an unknown role', (m) => m.recorder.snapshot({ role: 'behaviour' as 'online', trainingStep: 1, layers: LAYERS }), 'snapshot: role is "behaviour"; expected "online" or "target"', 'role'],
  ['a snapshot at a negative training step', (m) => m.recorder.snapshot({ role: 'online', trainingStep: -1, layers: LAYERS }), 'snapshot: trainingStep is -1; expected a whole number ≥ 0', 'trainingStep'],
  ['a note that ends before it starts', (m) => m.recorder.note({ from: 3, to: 2, text: 'backwards' }), 'note: to is 2; expected a step index ≥ from (3)', 'to'],
];

describe('a refused recorder call', () => {
  it.each(CASES)('refuses %s, naming the field, the value and what was expected', (_, badCall, message, field) => {
    const m = new MirroredRecording(HEADER, { blockSize: 3 });
    m.snapshot({ role: 'online', trainingStep: 0, layers: LAYERS });
    for (let t = 0; t < 4; t++) m.step(good(t));
    const statsBefore = { ...m.recorder.stats };
    const bytesBefore = m.sink.bytes().slice();

    const error = refusal(() => badCall(m));
    expect(error.message).toBe(message);
    expect(error.field).toBe(field);
    expect(error.name).toBe('RecordError');

    // Nothing was written and nothing counted.
    expect(m.recorder.stats).toEqual(statsBefore);
    expect(m.sink.bytes()).toEqual(bytesBefore);

    // Recording goes on, and the file holds exactly the accepted calls.
    for (let t = 4; t < 6; t++) m.step(good(t));
    m.endEpisode({ finalState: [0, 0] });
    m.step(good(6));
    m.endEpisode();
    const file = openStepFile(bytesSource(m.close()), 'refused.steps');
    expect(file.recovery.dropped).toEqual([]);
    expect(file.episodes.map((e) => e.length)).toEqual([6, 1]);
    for (const e of m.recordedEpisodes) {
      const steps = file.readEpisode(e.episode);
      const want = expectedColumns(e.steps, 2, 2, HEADER.extras);
      expect(bitsOf(steps.state)).toEqual(bitsOf(want.state));
      expect(steps.action).toEqual(want.action);
      expect(bitsOf(steps.q)).toEqual(bitsOf(want.q));
      expect(bitsOf(steps.extras.tdError)).toEqual(bitsOf(want.extras.tdError));
      expect(steps.weights).toEqual(want.weights);
      expect(steps.end).toEqual(e.end);
    }
    expect(file.snapshots.map((s) => s.id)).toEqual(m.snapshots.map((s) => s.id));
    expect(file.notes).toEqual([]);
  });

  it('refuses a step after a terminal step until the episode is ended, then goes on', () => {
    const m = new MirroredRecording(HEADER, { blockSize: 3 });
    m.step(good(0));
    m.step({ ...good(1), terminal: true });
    const error = refusal(() => m.recorder.step(good(2)));
    expect(error.message).toBe('step: episode 0 ended at step 1 (terminal); call endEpisode() before the next step');
    expect(refusal(() => m.recorder.step(good(2))).field).toBe('episode');
    m.endEpisode();
    m.step(good(2));
    m.endEpisode();
    const file = openStepFile(bytesSource(m.close()), 'refused.steps');
    expect(file.episodes.map((e) => [e.length, e.end?.outcome])).toEqual([
      [2, 'terminal'],
      [1, 'ended'],
    ]);
    expect(Array.from(file.readEpisode(1).state)).toEqual([2, -2]);
  });

  it('says which step a truncated episode ended at, also when that step filled a block', () => {
    const m = new MirroredRecording(HEADER, { blockSize: 3 });
    for (let t = 0; t < 2; t++) m.step(good(t));
    m.step({ ...good(2), truncated: true }); // fills and flushes the block
    expect(refusal(() => m.recorder.step(good(3))).message).toBe(
      'step: episode 0 ended at step 2 (truncated); call endEpisode() before the next step',
    );
  });

  it('keeps the weights in force when a snapshot is refused', () => {
    const m = new MirroredRecording(HEADER, { blockSize: 10 });
    const id = m.snapshot({ role: 'online', trainingStep: 0, layers: LAYERS });
    m.step(good(0));
    refusal(() => m.recorder.snapshot({ role: 'online', trainingStep: 5, layers: [{ ...LAYERS[0], activation: 'swish' as 'relu' }, LAYERS[1]] }));
    m.step(good(1));
    m.endEpisode();
    const file = openStepFile(bytesSource(m.close()), 'refused.steps');
    expect(file.readEpisode(0).weights).toEqual([[0, id, '']]);
    expect(file.snapshots).toHaveLength(1);
  });

  it.each([
    ['step', (m: MirroredRecording) => m.recorder.step(good(0))],
    ['endEpisode', (m: MirroredRecording) => m.recorder.endEpisode()],
    ['snapshot', (m: MirroredRecording) => m.recorder.snapshot({ role: 'online', trainingStep: 0, layers: LAYERS })],
    ['note', (m: MirroredRecording) => m.recorder.note({ from: 0, to: 0, text: 'late' })],
    ['close', (m: MirroredRecording) => m.recorder.close()],
  ])('refuses %s after close() and leaves the closed file as it was', (call, after) => {
    const m = new MirroredRecording(HEADER, { blockSize: 3 });
    m.step(good(0));
    m.endEpisode();
    const bytes = m.close().slice();
    const error = refusal(() => after(m));
    expect(error.message).toBe(`${call}: recorder is closed; no call is allowed after close()`);
    expect(error.field).toBe('recorder');
    expect(m.sink.bytes()).toEqual(bytes);
    const file = openStepFile(bytesSource(m.sink.bytes()), 'closed.steps');
    expect(file.recovery.indexed).toBe(true);
    expect(file.totalSteps).toBe(1);
  });
});

describe('recorder settings that are refused at creation', () => {
  it.each([
    ['no state dimensions', { ...HEADER, stateDims: [] }, {}, 'createRecorder: header.stateDims is empty; expected at least one {name, unit}'],
    ['no actions', { ...HEADER, actions: [] }, {}, 'createRecorder: header.actions is empty; expected at least one action name'],
    ['a discount above 1', { ...HEADER, gamma: 1.5 }, {}, 'createRecorder: header.gamma is 1.5; expected a discount in [0, 1]'],
    ['a map role pointing past the state', { ...HEADER, system: { kind: 'cart-pole', map: { angle: 2 } } }, {}, 'createRecorder: header.system.map.angle is 2; expected a state index in 0..1'],
    ['an extra column named twice', { ...HEADER, extras: ['tdError', 'tdError'] }, {}, 'createRecorder: header.extras names a column twice'],
    ['a block size of 0', HEADER, { blockSize: 0 }, 'createRecorder: options.blockSize is 0; expected a whole number of steps ≥ 1'],
    ['a fractional block size', HEADER, { blockSize: 2.5 }, 'createRecorder: options.blockSize is 2.5; expected a whole number of steps ≥ 1'],
  ])('refuses %s', (_, header, options, message) => {
    expect(refusal(() => createRecorder(new MemorySink(), header, options)).message).toBe(message);
  });
});

describe('optional header fields given as undefined', () => {
  it('takes extras: undefined as no extra columns (or refuses it with a RecordError), never a TypeError', () => {
    // RecorderHeader declares `extras?: string[]`, so `{ ...base, extras: options.extras }` type-checks.
    const header = { ...HEADER, extras: undefined as string[] | undefined };
    let rec;
    try {
      rec = createRecorder(new MemorySink(), header);
    } catch (e) {
      expect(e).toBeInstanceOf(RecordError);
      return;
    }
    rec.step({ state: [0, 0], action: 0, reward: 0, q: [0, 0] });
    rec.close();
  });
});

describe('a sink that fails', () => {
  it('stops the recorder, which then refuses every call and names the failure', () => {
    let writes = 0;
    const chunks: Uint8Array[] = [];
    const sink: ByteSink = {
      write(bytes) {
        if (++writes === 4) throw new Error('disk full');
        chunks.push(bytes.slice());
      },
      close() {},
    };
    const rec = createRecorder(sink, HEADER, { blockSize: 2 });
    rec.step(good(0));
    rec.step(good(1)); // block 1: the third write (after magic and header)
    rec.step(good(2));
    expect(() => rec.step(good(3))).toThrow('disk full'); // block 2: the fourth write fails
    expect(refusal(() => rec.step(good(4))).message).toBe('step: recorder cannot be used after its sink failed: disk full');
    expect(refusal(() => rec.close()).message).toBe('close: recorder cannot be used after its sink failed: disk full');
    const written = new Uint8Array(chunks.reduce((n, c) => n + c.length, 0));
    let at = 0;
    for (const c of chunks) written.set(c, (at += c.length) - c.length);
    const file = openStepFile(bytesSource(written), 'full-disk.steps');
    expect(file.recovery).toEqual({ indexed: false, indexProblem: null, records: 2, dropped: [] });
    expect(Array.from(file.readEpisode(0).state)).toEqual([0, -0, 1, -1]);
  });
});

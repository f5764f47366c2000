/**
 * The viewer on a 1,000,000-step episode (D = 4, A = 2, a 4→64→64→2 target network in force),
 * next to a 500-step episode in the same run, in headless Chromium through the real server.
 *
 * What is measured, all in the page, on its own clock (`performance.now()`, zero at navigation):
 *
 * - first full frame: navigation start → the first animation frame at which the Readout shows
 *   step 0 and the Stage canvas and all five lane canvases each have ≥ 0.5 % pixels that are not
 *   the page's background. This includes fetching and opening the file and reading the episode.
 * - series ready / suspects ready: navigation start → the Readout shows the TD pieces (the worker
 *   sent the episode's series, forward pass over every next state included) / the Suspects list
 *   is filled (the worker judged the whole file).
 * - scrub step: once both have arrived (so nothing else competes), 200 key presses through the
 *   real input path (→ and Shift+→ alternately, turning round at the ends). For each, from the
 *   keydown event's timestamp to the first task after the rendering step of the frame in which the
 *   Readout shows the new step (requestAnimationFrame, then a posted message: that frame's
 *   effects, Stage render, style, layout and paint are in). "Readout updated" is the part up to the
 *   Readout's DOM changing, before waiting for the frame. The floor under both: the same path
 *   for a key the viewer ignores ('x'), i.e. the browser's own wait for and cost of a frame.
 */
import { mkdtempSync, rmSync, statSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import type { Page } from 'playwright-core';
import { createRandom } from '../src/envs/random.ts';
import { createRecorder } from '../src/record/recorder.ts';
import { FileSink } from '../src/record/file-sink.ts';
import { startViewer } from '../test/browser/harness.ts';
import type { BenchRow } from './timing.ts';
import { randomNet } from './nets.ts';

const BIG = 1_000_000;
const SMALL = 500;
const SCRUB_PRESSES = 200;
const D = 4;
const A = 2;

/**
 * One episode of `steps` steps: a mean-reverting random walk that stays on the rail and inside
 * the angle limit, so the Stage draws a plausible trolley; Q follows the mast's angle, so the
 * greedy action flips where the angle changes sign, as a balancing agent's does.
 */
function writeEpisode(path: string, steps: number, seed: number): void {
  const rng = createRandom(seed);
  const rec = createRecorder(new FileSink(path, { overwrite: true }), {
    stateDims: [
      { name: 'x', unit: 'm' },
      { name: 'x_dot', unit: 'm/s' },
      { name: 'theta', unit: 'rad' },
      { name: 'theta_dot', unit: 'rad/s' },
    ],
    actions: ['push left', 'push right'],
    gamma: 0.99,
    system: {
      kind: 'cart-pole',
      title: 'balancing trolley (bench)',
      map: { position: 0, velocity: 1, angle: 2, angularVelocity: 3 },
      params: { railHalfLength: 2.4, angleLimit: 0.2094, poleHalfLength: 0.5, force: 10, tau: 0.02 },
    },
  });
  rec.snapshot({ role: 'target', trainingStep: 0, layers: randomNet(seed + 1) });
  const spread = [1.0, 0.5, 0.08, 0.3];
  const s = [0, 0, 0, 0];
  const state = new Float32Array(D);
  const q = new Float32Array(A);
  for (let t = 0; t < steps; t++) {
    for (let i = 0; i < D; i++) {
      s[i] += -0.002 * s[i] + spread[i] * rng.uniform(-0.01, 0.01);
      state[i] = s[i];
    }
    const base = 5 + 2 * Math.sin(t / 5000);
    q[0] = base - 2 * s[2] + rng.uniform(-0.01, 0.01);
    q[1] = base + 2 * s[2] + rng.uniform(-0.01, 0.01);
    const explored = rng.next() < 0.05;
    const greedy = q[0] >= q[1] ? 0 : 1;
    const truncated = t === steps - 1;
    rec.step({ state, q, action: explored ? 1 - greedy : greedy, reward: 0.1 * (1 - Math.abs(s[2]) / 0.21), explored, truncated });
    if (truncated) rec.endEpisode({ mode: 'train', finalState: state, finalQ: q });
  }
  rec.close();
}

/*
 * The in-page scripts are plain JavaScript text, not TypeScript functions handed to the page: a
 * TypeScript loader may wrap named inner functions with helpers that exist only in Node.
 */

/** Runs in the page before its own scripts: watches every frame for the first full one. */
const WATCH_FIRST_FRAME = `(() => {
  const bench = (window.__bench = { firstFrame: null, seriesReady: null, suspectsReady: null });
  const backgrounds = [[0xfb, 0xfa, 0xf5], [0xf4, 0xf1, 0xe8]];
  const scratch = document.createElement('canvas');
  // A canvas is drawn when at least 0.5 % of its pixels are not the page's background.
  const drawn = (canvas) => {
    if (!canvas || canvas.width < 2 || canvas.height < 2) return false;
    scratch.width = canvas.width;
    scratch.height = canvas.height;
    const g = scratch.getContext('2d', { willReadFrequently: true });
    g.drawImage(canvas, 0, 0);
    const px = g.getImageData(0, 0, canvas.width, canvas.height).data;
    let count = 0;
    for (let p = 0; p < px.length; p += 4) {
      if (px[p + 3] === 0) continue;
      if (!backgrounds.some(([r, gr, b]) => Math.abs(px[p] - r) <= 12 && Math.abs(px[p + 1] - gr) <= 12 && Math.abs(px[p + 2] - b) <= 12)) count++;
    }
    return count >= 0.005 * (px.length / 4);
  };
  const lanes = ['q', 'td', 'return', 'gap', 'reward'];
  const check = () => {
    const now = performance.now();
    if (bench.firstFrame === null && document.querySelector('[data-testid=readout-step]')?.textContent?.trim() === '0') {
      const canvases = [document.querySelector('[data-testid=stage] canvas'), ...lanes.map((id) => document.querySelector('[data-testid=lane-' + id + '] canvas'))];
      if (canvases.every(drawn)) bench.firstFrame = now;
    }
    if (bench.seriesReady === null && document.querySelector('[data-testid=readout-td]')) bench.seriesReady = now;
    const suspects = document.querySelector('[data-testid=suspects]');
    if (bench.suspectsReady === null && suspects && (suspects.querySelector('button[data-rule]') || suspects.textContent.includes('none found'))) bench.suspectsReady = now;
    if (bench.firstFrame === null || bench.seriesReady === null || bench.suspectsReady === null) requestAnimationFrame(check);
  };
  requestAnimationFrame(check);
})()`;

/** Installed once the page is steady: one latency pair per change of the Readout's step. */
const WATCH_SCRUB = `(() => {
  const out = (window.__scrub = { handled: [], painted: [] });
  let pressed = null;
  // Capture on window runs before the viewer's own keydown listener.
  window.addEventListener('keydown', (e) => (pressed = e.timeStamp), true);
  const stepText = () => document.querySelector('[data-testid=readout-step]')?.textContent;
  let last = stepText();
  new MutationObserver(() => {
    const now = stepText();
    if (pressed === null || now === last) return;
    last = now;
    const start = pressed;
    pressed = null;
    out.handled.push(performance.now() - start);
    requestAnimationFrame(() => {
      const channel = new MessageChannel();
      channel.port1.onmessage = () => out.painted.push(performance.now() - start);
      channel.port2.postMessage(null);
    });
  }).observe(document.querySelector('[data-testid=readout]'), { subtree: true, childList: true, characterData: true });
})()`;

/** The floor under every scrub figure: a key the viewer ignores, to the next painted frame. */
const WATCH_IDLE = `(() => {
  const out = (window.__idle = []);
  window.addEventListener('keydown', (e) => {
    if (e.key !== 'x') return;
    const start = e.timeStamp;
    requestAnimationFrame(() => {
      const channel = new MessageChannel();
      channel.port1.onmessage = () => out.push(performance.now() - start);
      channel.port2.postMessage(null);
    });
  }, true);
})()`;

const median = (xs: number[]) => quantile(xs, 0.5);
function quantile(xs: number[], p: number): number {
  const sorted = [...xs].sort((a, b) => a - b);
  return sorted[Math.max(0, Math.ceil(p * sorted.length) - 1)];
}

interface Measured {
  firstFrame: number;
  seriesReady: number;
  suspectsReady: number;
  scrubMedian: number;
  scrubP95: number;
  handledMedian: number;
  idleMedian: number;
}

async function measure(page: Page, url: string, name: string, steps: number): Promise<Measured> {
  // A new document each time (a hash change alone would not reload), so the clock starts at zero.
  await page.goto('about:blank');
  await page.goto(`${url}#file=${encodeURIComponent(name)}&episode=0&step=0`);
  // Predicates as functions, not text: the page's policy forbids evaluating text as script.
  const timing = await page.waitForFunction(
    () => {
      const b = (window as unknown as { __bench?: Record<string, number | null> }).__bench;
      return b && b.firstFrame !== null && b.seriesReady !== null && b.suspectsReady !== null ? b : null;
    },
    null,
    { timeout: 120_000, polling: 100 },
  );
  const { firstFrame, seriesReady, suspectsReady } = (await timing.jsonValue()) as Record<string, number>;

  await page.evaluate(WATCH_IDLE);
  for (let i = 0; i < 40; i++) {
    await page.keyboard.press('x');
    await page.waitForFunction((count) => (window as unknown as { __idle: number[] }).__idle.length > count, i, { polling: 'raf' });
  }
  const idle = (await page.evaluate('window.__idle')) as number[];

  await page.evaluate(WATCH_SCRUB);
  let row = 0;
  let direction = 1;
  for (let i = 0; i < SCRUB_PRESSES; i++) {
    const by = i % 2 === 0 ? 1 : 10;
    if (row + direction * by < 0 || row + direction * by > steps - 1) direction = -direction;
    row += direction * by;
    await page.keyboard.press(`${by === 10 ? 'Shift+' : ''}${direction > 0 ? 'ArrowRight' : 'ArrowLeft'}`);
    await page.waitForFunction((count) => (window as unknown as { __scrub: { painted: number[] } }).__scrub.painted.length > count, i, { polling: 'raf' });
  }
  const shownStep = Number(await page.getByTestId('readout-step').textContent());
  if (shownStep !== row) throw new Error(`viewer bench: after ${SCRUB_PRESSES} presses the Readout shows step ${shownStep}; expected ${row}`);
  const { handled, painted } = (await page.evaluate('window.__scrub')) as { handled: number[]; painted: number[] };
  return { firstFrame, seriesReady, suspectsReady, scrubMedian: median(painted), scrubP95: quantile(painted, 0.95), handledMedian: median(handled), idleMedian: median(idle) };
}

export async function viewerBench(): Promise<{ rows: BenchRow[]; figures: Record<string, number> }> {
  const dir = mkdtempSync(join(tmpdir(), 'ep-viewer-bench-'));
  try {
    const bigPath = join(dir, 'million.steps');
    const smallPath = join(dir, 'small.steps');
    writeEpisode(bigPath, BIG, 11);
    writeEpisode(smallPath, SMALL, 11);
    const viewer = await startViewer([
      { path: bigPath, name: 'million.steps' },
      { path: smallPath, name: 'small.steps' },
    ]);
    let big: Measured, small: Measured;
    try {
      await viewer.context.addInitScript({ content: WATCH_FIRST_FRAME });
      const page = await viewer.open('');
      // The small one first: it also warms the browser's cache of the viewer's own files.
      small = await measure(page, viewer.url, 'small.steps', SMALL);
      big = await measure(page, viewer.url, 'million.steps', BIG);
      const problems = viewer.takeProblems();
      if (problems.length) throw new Error(`viewer bench: the page reported problems:\n${problems.join('\n')}`);
    } finally {
      await viewer.close();
    }
    const mb = statSync(bigPath).size / 1e6;
    const figures: Record<string, number> = {
      fileMegabytes: mb,
      firstFrameMs: big.firstFrame,
      seriesReadyMs: big.seriesReady,
      suspectsReadyMs: big.suspectsReady,
      scrubMedianMs: big.scrubMedian,
      scrubP95Ms: big.scrubP95,
      readoutUpdatedMedianMs: big.handledMedian,
      idleFrameMedianMs: big.idleMedian,
      smallFirstFrameMs: small.firstFrame,
      smallSeriesReadyMs: small.seriesReady,
      smallScrubMedianMs: small.scrubMedian,
      smallScrubP95Ms: small.scrubP95,
      smallReadoutUpdatedMedianMs: small.handledMedian,
      firstFrameRatio: big.firstFrame / small.firstFrame,
      scrubMedianRatio: big.scrubMedian / small.scrubMedian,
    };
    const rows: BenchRow[] = [
      { what: 'step file, 1,000,000 steps', value: mb, unit: 'MB' },
      { what: 'first full frame, 1,000,000-step episode', value: big.firstFrame, unit: 'ms', target: '≤ 1500 ms', ok: big.firstFrame <= 1500 },
      { what: '  series ready (TD against the target)', value: big.seriesReady, unit: 'ms' },
      { what: '  suspects ready (whole file judged)', value: big.suspectsReady, unit: 'ms' },
      { what: 'scrub step, median (keydown → painted frame)', value: big.scrubMedian, unit: 'ms', target: '≤ 16 ms', ok: big.scrubMedian <= 16 },
      { what: 'scrub step, 95th percentile', value: big.scrubP95, unit: 'ms' },
      { what: '  keydown → Readout updated, median', value: big.handledMedian, unit: 'ms' },
      { what: '  ignored key → painted frame, median (the floor)', value: big.idleMedian, unit: 'ms' },
      { what: 'first full frame, 500-step episode', value: small.firstFrame, unit: 'ms' },
      { what: 'scrub step, median, 500-step episode', value: small.scrubMedian, unit: 'ms' },
      { what: 'scrub step, 95th percentile, 500-step episode', value: small.scrubP95, unit: 'ms' },
      { what: 'first frame, 1,000,000 against 500 steps', value: figures.firstFrameRatio, unit: '×' },
      { what: 'scrub median, 1,000,000 against 500 steps', value: figures.scrubMedianRatio, unit: '×' },
    ];
    return { rows, figures };
  } finally {
    rmSync(dir, { recursive: true, force: true });
  }
}

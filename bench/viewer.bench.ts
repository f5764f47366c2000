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
 *   Readout's DOM changing, before waiting for the frame. The floor: the same path for a key the
 *   viewer ignores ('x'), i.e. the browser's own wait for and cost of a frame.
 *
 * The scrub step is measured twice, in two browsers, on the same file:
 *
 * - at 60 Hz: Chromium as the tests run it, its frames locked to a 60 Hz clock; each key is
 *   pressed as soon as the previous step is painted, and the harness waits by polling on every
 *   animation frame. Every figure then includes a wait for the next tick of that clock, up to
 *   16.7 ms, whose length depends on where in the tick the key lands, not on the viewer. Paced by
 *   the previous frame and the harness's round trip, a key tends to land just after a tick, so
 *   the figure sits near the floor plus the step's work; but the ignored key and the scrub keys
 *   need not land at the same phase, so the floor is the size of that wait, not a lower bound.
 * - frame rate unlocked (`--disable-frame-rate-limit --disable-gpu-vsync`): a frame starts as soon
 *   as one is needed. Each key is pressed once the previous step is painted and the page has then
 *   been left alone for PAUSE_MS, and the harness waits on a callback, not by asking for frames,
 *   so every press finds the browser idle, as a person's key presses do (key repeat is some 30 a
 *   second). Without the pause, a key pressed straight after a frame still waited for a 60 Hz
 *   tick here (the floor was ~13 ms instead of ~2): Chromium keeps pacing frames that change
 *   nothing at 60 Hz when unlocked (a requestAnimationFrame loop that changes nothing ran at ~60).
 *   The end point is the same as at 60 Hz: the painted frame that shows the new step. Its floor,
 *   and the frame rate of a loop that changes a pixel each frame, are printed beside it to show
 *   that the limit really is lifted. Only the 1,000,000-step episode is measured this way.
 *
 * The ≤ 16 ms target is judged on the unlocked figure. The target says a step must cost no more
 * than one frame at 60 Hz; the unlocked figure is that cost: the input, the viewer's own work and
 * the browser's work for the frame that shows the step, with no wait for a clock the display
 * sets. At 60 Hz the floor alone is ~14 ms with this pacing, so that figure could meet the
 * target only for a step that cost the browser almost nothing, whatever the viewer did. It
 * stays beside the target figure, with its floor, because it is what a 60 Hz screen adds on top,
 * and work that spills into the next frame shows there first.
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

/**
 * Installed once the page is steady: one latency pair per change of the Readout's step. Each
 * painted figure also calls `window.__benchNotify`, so a harness can wait without asking the page
 * for frames.
 */
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
      channel.port1.onmessage = () => {
        out.painted.push(performance.now() - start);
        window.__benchNotify?.();
      };
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
      channel.port1.onmessage = () => {
        out.push(performance.now() - start);
        window.__benchNotify?.();
      };
      channel.port2.postMessage(null);
    });
  }, true);
})()`;

/**
 * Frames in one second of a requestAnimationFrame loop that changes one pixel each frame: ~60
 * when the rate is locked. (A frame that changes nothing is paced at 60 Hz even when unlocked.)
 */
const FRAME_RATE = `new Promise((resolve) => {
  const dot = document.body.appendChild(document.createElement('div'));
  dot.style.cssText = 'position: fixed; left: 0; top: 0; width: 1px; height: 1px';
  let frames = 0;
  const start = performance.now();
  const tick = (now) => {
    frames++;
    dot.style.background = frames % 2 ? '#000' : '#fff';
    if (now - start < 1000) return requestAnimationFrame(tick);
    dot.remove();
    resolve((frames * 1000) / (now - start));
  };
  requestAnimationFrame(tick);
})`;

/** How long the page is left alone between presses when the frame rate is unlocked. */
const PAUSE_MS = 40;

const median = (xs: number[]) => quantile(xs, 0.5);
function quantile(xs: number[], p: number): number {
  const sorted = [...xs].sort((a, b) => a - b);
  return sorted[Math.max(0, Math.ceil(p * sorted.length) - 1)];
}

interface Loaded {
  firstFrame: number;
  seriesReady: number;
  suspectsReady: number;
}

interface Scrub {
  median: number;
  p95: number;
  handledMedian: number;
  idleMedian: number;
  frameRate: number;
}

/** How the harness waits for each painted step: see the header. */
type Pacing = 'back-to-back' | 'paced';

async function load(page: Page, url: string, name: string): Promise<Loaded> {
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
  return (await timing.jsonValue()) as unknown as Loaded;
}

/** Wait until the page holds more than `count` figures in the list `which` names. */
async function waitForFigure(page: Page, which: 'idle' | 'painted', count: number, pacing: Pacing): Promise<void> {
  if (pacing === 'back-to-back') {
    await page.waitForFunction(
      ([w, c]) => {
        const win = window as unknown as { __idle: number[]; __scrub: { painted: number[] } };
        return (w === 'idle' ? win.__idle : win.__scrub.painted).length > c;
      },
      [which, count] as const,
      { polling: 'raf' },
    );
    return;
  }
  const list = which === 'idle' ? 'window.__idle' : 'window.__scrub.painted';
  await page.evaluate(`new Promise((resolve) => {
    const done = () => ${list}.length > ${count};
    if (done()) return resolve(null);
    window.__benchNotify = () => { if (done()) { window.__benchNotify = null; resolve(null); } };
  })`);
  await new Promise((r) => setTimeout(r, PAUSE_MS));
}

async function measureScrub(page: Page, steps: number, pacing: Pacing): Promise<Scrub> {
  const frameRate = (await page.evaluate(FRAME_RATE)) as number;
  await page.evaluate(WATCH_IDLE);
  for (let i = 0; i < 40; i++) {
    await page.keyboard.press('x');
    await waitForFigure(page, 'idle', i, pacing);
  }
  const idle = (await page.evaluate('window.__idle')) as number[];

  await page.evaluate(WATCH_SCRUB);
  let row = Number(await page.getByTestId('readout-step').textContent());
  const first = row;
  let direction = 1;
  for (let i = 0; i < SCRUB_PRESSES; i++) {
    const by = i % 2 === 0 ? 1 : 10;
    if (row + direction * by < 0 || row + direction * by > steps - 1) direction = -direction;
    row += direction * by;
    await page.keyboard.press(`${by === 10 ? 'Shift+' : ''}${direction > 0 ? 'ArrowRight' : 'ArrowLeft'}`);
    await waitForFigure(page, 'painted', i, pacing);
  }
  const shownStep = Number(await page.getByTestId('readout-step').textContent());
  if (shownStep !== row) throw new Error(`viewer bench: after ${SCRUB_PRESSES} presses from step ${first} the Readout shows step ${shownStep}; expected ${row}`);
  const { handled, painted } = (await page.evaluate('window.__scrub')) as { handled: number[]; painted: number[] };
  return { median: median(painted), p95: quantile(painted, 0.95), handledMedian: median(handled), idleMedian: median(idle), frameRate };
}

export async function viewerBench(): Promise<{ rows: BenchRow[]; figures: Record<string, number> }> {
  const dir = mkdtempSync(join(tmpdir(), 'ep-viewer-bench-'));
  try {
    const bigPath = join(dir, 'million.steps');
    const smallPath = join(dir, 'small.steps');
    writeEpisode(bigPath, BIG, 11);
    writeEpisode(smallPath, SMALL, 11);
    const files = [
      { path: bigPath, name: 'million.steps' },
      { path: smallPath, name: 'small.steps' },
    ];

    // At 60 Hz, as the tests run Chromium: loading, and scrubbing both episodes.
    let big: Loaded & { locked: Scrub }, small: Loaded & { locked: Scrub };
    {
      const viewer = await startViewer(files);
      try {
        await viewer.context.addInitScript({ content: WATCH_FIRST_FRAME });
        const page = await viewer.open('');
        // The small one first: it also warms the browser's cache of the viewer's own files.
        const smallLoaded = await load(page, viewer.url, 'small.steps');
        small = { ...smallLoaded, locked: await measureScrub(page, SMALL, 'back-to-back') };
        const bigLoaded = await load(page, viewer.url, 'million.steps');
        big = { ...bigLoaded, locked: await measureScrub(page, BIG, 'back-to-back') };
        const problems = viewer.takeProblems();
        if (problems.length) throw new Error(`viewer bench: the page reported problems:\n${problems.join('\n')}`);
      } finally {
        await viewer.close();
      }
    }

    // The frame rate unlocked: what a scrub step costs, without a wait for a display's clock.
    let unlocked: Scrub;
    {
      const viewer = await startViewer(files, { chromiumArgs: ['--disable-frame-rate-limit', '--disable-gpu-vsync'] });
      try {
        await viewer.context.addInitScript({ content: WATCH_FIRST_FRAME });
        const page = await viewer.open('');
        await load(page, viewer.url, 'million.steps');
        unlocked = await measureScrub(page, BIG, 'paced');
        const problems = viewer.takeProblems();
        if (problems.length) throw new Error(`viewer bench: the page reported problems (frame rate unlocked):\n${problems.join('\n')}`);
      } finally {
        await viewer.close();
      }
    }

    const mb = statSync(bigPath).size / 1e6;
    const figures: Record<string, number> = {
      fileMegabytes: mb,
      firstFrameMs: big.firstFrame,
      seriesReadyMs: big.seriesReady,
      suspectsReadyMs: big.suspectsReady,
      // At 60 Hz, as this bench has always measured them.
      scrubMedianMs: big.locked.median,
      scrubP95Ms: big.locked.p95,
      readoutUpdatedMedianMs: big.locked.handledMedian,
      idleFrameMedianMs: big.locked.idleMedian,
      frameRateAt60Hz: big.locked.frameRate,
      // The frame rate unlocked: the target's figure.
      unlockedScrubMedianMs: unlocked.median,
      unlockedScrubP95Ms: unlocked.p95,
      unlockedReadoutUpdatedMedianMs: unlocked.handledMedian,
      unlockedIdleFrameMedianMs: unlocked.idleMedian,
      unlockedFrameRate: unlocked.frameRate,
      smallFirstFrameMs: small.firstFrame,
      smallSeriesReadyMs: small.seriesReady,
      smallScrubMedianMs: small.locked.median,
      smallScrubP95Ms: small.locked.p95,
      smallReadoutUpdatedMedianMs: small.locked.handledMedian,
      firstFrameRatio: big.firstFrame / small.firstFrame,
      scrubMedianRatio: big.locked.median / small.locked.median,
    };
    const rows: BenchRow[] = [
      { what: 'step file, 1,000,000 steps', value: mb, unit: 'MB' },
      { what: 'first full frame, 1,000,000-step episode', value: big.firstFrame, unit: 'ms', target: '≤ 1500 ms', ok: big.firstFrame <= 1500 },
      { what: '  series ready (TD against the target)', value: big.seriesReady, unit: 'ms' },
      { what: '  suspects ready (whole file judged)', value: big.suspectsReady, unit: 'ms' },
      { what: 'scrub step, median (keydown → painted frame; frame rate unlocked)', value: unlocked.median, unit: 'ms', target: '≤ 16 ms', ok: unlocked.median <= 16 },
      { what: '  95th percentile', value: unlocked.p95, unit: 'ms' },
      { what: '  keydown → Readout updated, median', value: unlocked.handledMedian, unit: 'ms' },
      { what: '  ignored key → painted frame, median (the floor)', value: unlocked.idleMedian, unit: 'ms' },
      { what: '  frames a second, a requestAnimationFrame loop', value: unlocked.frameRate, unit: '/s' },
      { what: 'scrub step at 60 Hz, median (keydown → painted frame)', value: big.locked.median, unit: 'ms' },
      { what: '  95th percentile', value: big.locked.p95, unit: 'ms' },
      { what: '  keydown → Readout updated, median', value: big.locked.handledMedian, unit: 'ms' },
      { what: '  ignored key → painted frame, median (the floor)', value: big.locked.idleMedian, unit: 'ms' },
      { what: '  frames a second, a requestAnimationFrame loop', value: big.locked.frameRate, unit: '/s' },
      { what: 'first full frame, 500-step episode', value: small.firstFrame, unit: 'ms' },
      { what: 'scrub step at 60 Hz, median, 500-step episode', value: small.locked.median, unit: 'ms' },
      { what: '  95th percentile', value: small.locked.p95, unit: 'ms' },
      { what: 'first frame, 1,000,000 against 500 steps', value: figures.firstFrameRatio, unit: '×' },
      { what: 'scrub median at 60 Hz, 1,000,000 against 500 steps', value: figures.scrubMedianRatio, unit: '×' },
    ];
    return { rows, figures };
  } finally {
    rmSync(dir, { recursive: true, force: true });
  }
}

/**
 * The viewer in a real browser, served by the real `episcope view` server: what the Readout says
 * must be what the step file holds, the keys must move where NAMING.md says, the TD error on
 * screen must be the library's, and the Stage and Lanes must actually be drawn.
 *
 * Every expected number is read from the committed samples here, independently of the page. Any
 * console error, page error or request that leaves 127.0.0.1 fails the test it happened in.
 */
import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import type { Page } from 'playwright-core';
import { afterAll, afterEach, beforeAll, describe, expect, it } from 'vitest';
import { openStepFilePath } from '../../formats/node.ts';
import type { EpisodeSteps, StepFile } from '../../formats/reader.ts';
import { FLAG_EXPLORED } from '../../formats/types.ts';
import { episodeSeries } from '../../src/analysis/series.ts';
import { forwardDense } from '../../src/net/forward.ts';
import { LANE_GUTTER } from '../../viewer/lanes/draw.ts';
import { palette } from '../../viewer/theme.ts';
import { decodePng, drawnShare, startViewer, type Viewer } from './harness.ts';

const SAMPLES = fileURLToPath(new URL('../../samples/', import.meta.url));
const SAMPLE_NAMES = ['trolley.steps', 'trolley-fast-sync.steps', 'rover.steps'];

let viewer: Viewer;
let trolley: StepFile;
/** The first evaluation episode of trolley.steps: greedy throughout, long enough to scrub. */
let evalEpisode: number;
let evalSteps: EpisodeSteps;
let page: Page | null = null;

beforeAll(async () => {
  trolley = openStepFilePath(join(SAMPLES, 'trolley.steps'));
  const info = trolley.episodes.find((e) => e.end?.mode === 'eval');
  if (!info) throw new Error('trolley.steps has no evaluation episode');
  evalEpisode = info.episode;
  evalSteps = trolley.readEpisode(evalEpisode);
  viewer = await startViewer(SAMPLE_NAMES.map((name) => ({ path: join(SAMPLES, name), name })));
});

afterAll(async () => {
  await viewer?.close();
  trolley?.close();
});

afterEach(async () => {
  await page?.close();
  page = null;
  expect(viewer.takeProblems()).toEqual([]);
});

/** A fresh page at this view, once the Readout shows a step. */
async function openAt(hash: string): Promise<Page> {
  page = await viewer.open(hash);
  await page.getByTestId('readout-step').waitFor();
  return page;
}

/**
 * With a target network in force (the default for a file with target snapshots), the TD pieces
 * appear only once the worker has sent the episode's series: flips, greedy marks and lanes need it.
 */
async function untilSeriesArrives(p: Page): Promise<void> {
  await p.getByTestId('readout-td').waitFor();
}

const text = async (p: Page, testId: string) => (await p.getByTestId(testId).textContent())?.trim() ?? '';
const shownStep = async (p: Page) => Number(await text(p, 'readout-step'));

async function expectStep(p: Page, step: number): Promise<void> {
  await expect.poll(() => shownStep(p)).toBe(step);
}

/** The greedy action per row: the first largest finite Q, −1 where no Q is finite. */
function greedyOf(steps: EpisodeSteps, actionCount: number): number[] {
  return Array.from({ length: steps.n }, (_, t) => {
    let best = -1;
    for (let a = 0; a < actionCount; a++) {
      const v = steps.q[t * actionCount + a];
      if (Number.isFinite(v) && (best < 0 || v > steps.q[t * actionCount + best])) best = a;
    }
    return best;
  });
}

function hashOf(p: Page): Promise<Record<string, string>> {
  return p.evaluate(() => Object.fromEntries(new URLSearchParams(location.hash.slice(1))));
}

describe('the viewer in a browser', () => {
  it('shows the recorded step index and state after five steps forward', async () => {
    const p = await openAt(`#file=trolley.steps&episode=${evalEpisode}&step=0`);
    expect(await text(p, 'readout-episode')).toBe(String(evalEpisode));
    await expectStep(p, evalSteps.step[0]);
    for (let i = 0; i < 5; i++) await p.keyboard.press('ArrowRight');
    await expectStep(p, evalSteps.step[5]);
    const D = trolley.header.stateDims.length;
    for (let i = 0; i < D; i++) {
      // The Readout prints five decimals.
      const shown = Number(await text(p, `readout-state-${i}`));
      expect(Math.abs(shown - evalSteps.state[5 * D + i]), `state ${i}`).toBeLessThanOrEqual(1e-5);
    }
  });

  it('moves ten steps with Shift and to the ends with Home and End', async () => {
    expect(evalSteps.n).toBeGreaterThan(25);
    const p = await openAt(`#file=trolley.steps&episode=${evalEpisode}&step=0`);
    await p.keyboard.press('Shift+ArrowRight');
    await expectStep(p, evalSteps.step[10]);
    await p.keyboard.press('Shift+ArrowRight');
    await expectStep(p, evalSteps.step[20]);
    await p.keyboard.press('Shift+ArrowLeft');
    await expectStep(p, evalSteps.step[10]);
    await p.keyboard.press('End');
    await expectStep(p, evalSteps.step[evalSteps.n - 1]);
    // One step past the last stays on the last.
    await p.keyboard.press('ArrowRight');
    await expectStep(p, evalSteps.step[evalSteps.n - 1]);
    await p.keyboard.press('Home');
    await expectStep(p, evalSteps.step[0]);
  });

  it('jumps with n to the next step whose greedy action differs from the previous step’s', async () => {
    const A = trolley.header.actions.length;
    const greedy = greedyOf(evalSteps, A);
    const nextFlip = (after: number) => {
      for (let t = after + 1; t < evalSteps.n; t++) if (greedy[t] >= 0 && greedy[t - 1] >= 0 && greedy[t] !== greedy[t - 1]) return t;
      return -1;
    };
    const first = nextFlip(0);
    const second = nextFlip(first);
    expect(first, 'the evaluation episode has two greedy flips').toBeGreaterThan(0);
    expect(second).toBeGreaterThan(first);

    const p = await openAt(`#file=trolley.steps&episode=${evalEpisode}&step=0`);
    await untilSeriesArrives(p);
    for (const row of [first, second]) {
      await p.keyboard.press('n');
      await expectStep(p, evalSteps.step[row]);
      const g = greedy[row];
      expect(g).not.toBe(greedy[row - 1]);
      const explored = (evalSteps.flags[row] & FLAG_EXPLORED) !== 0;
      const action = evalSteps.action[row];
      expect(Number(await p.getByTestId('readout-action').getAttribute('data-action'))).toBe(action);
      expect(await text(p, 'readout-choice')).toBe(explored ? 'explored' : action === g ? 'greedy' : 'not greedy');
      for (let a = 0; a < A; a++) {
        const q = p.getByTestId(`readout-q-${a}`);
        expect(Math.abs(Number((await q.textContent())!.trim()) - evalSteps.q[row * A + a]), `Q of action ${a}`).toBeLessThanOrEqual(1e-5);
        // The cell after each Q names the greedy action, and only that one.
        expect((await q.locator('xpath=following-sibling::td[1]').textContent())?.trim()).toBe(a === g ? 'greedy' : '');
      }
      await expect.poll(() => p.getByText('greedy flipped').isVisible()).toBe(true);
    }
  });

  it('shows the library’s TD error against a chosen target snapshot, under the DQN and the Double rule', async () => {
    // The last target snapshot: a network other than the one in force at most episodes.
    const index = trolley.snapshots.findLastIndex((s) => s.role === 'target');
    expect(index).toBeGreaterThanOrEqual(0);
    const ref = trolley.snapshots[index];
    const layers = trolley.readSnapshot(ref).layers;
    const tdUnder = (rule: 'dqn' | 'double') =>
      episodeSeries(evalSteps, trolley.header, {
        target: (states, n) => forwardDense(layers, states, n),
        td: { rule, gamma: trolley.header.gamma, n: 3, truncation: 'bootstrap' },
      }).td!;
    const dqn = tdUnder('dqn');
    const double = tdUnder('double');
    // A row where the two rules disagree, so switching the rule is seen.
    let row = -1;
    for (let t = 1; t < evalSteps.n && row < 0; t++) {
      if (Number.isFinite(dqn.delta[t]) && Number.isFinite(double.delta[t]) && Math.abs(dqn.delta[t] - double.delta[t]) > 1e-4) row = t;
    }
    expect(row, 'a row where the DQN and Double targets differ').toBeGreaterThan(0);

    const p = await openAt(`#file=trolley.steps&episode=${evalEpisode}&step=${evalSteps.step[row]}`);
    await expectStep(p, evalSteps.step[row]);
    await untilSeriesArrives(p);
    const delta = p.getByTestId('readout-delta');
    const relativeError = async (expected: number) => {
      const shown = Number(await delta.getAttribute('data-value'));
      return Math.abs(shown - expected) / Math.max(Math.abs(expected), Number.MIN_VALUE);
    };

    await p.getByTestId('target-select').selectOption(`snapshot:${index}`);
    await expect.poll(() => text(p, 'readout-target-source')).toContain(ref.id);
    await expect.poll(() => relativeError(dqn.delta[row])).toBeLessThanOrEqual(1e-9);
    expect(Math.abs(Number(await text(p, 'readout-target')) - dqn.target[row])).toBeLessThanOrEqual(1e-5);

    await p.getByTestId('rule-select').selectOption('double');
    await expect.poll(() => relativeError(double.delta[row])).toBeLessThanOrEqual(1e-9);
    expect(Math.abs(Number(await text(p, 'readout-target')) - double.target[row])).toBeLessThanOrEqual(1e-5);
  });

  it('draws the Stage and every lane', async () => {
    const p = await openAt(`#file=trolley.steps&episode=${evalEpisode}&step=40`);
    await untilSeriesArrives(p);
    // Drawing waits for a frame after the data arrives, so look until something is there.
    for (const id of ['stage', 'lane-q', 'lane-td', 'lane-return', 'lane-gap', 'lane-reward']) {
      const where = p.getByTestId(id);
      await expect
        .poll(async () => drawnShare(decodePng(await where.screenshot()), [palette.panel, palette.paper]), { message: `${id} is drawn`, timeout: 10_000 })
        .toBeGreaterThanOrEqual(0.02);
    }
  });

  it('exports a PNG of the view with the Stage drawn at its top', async () => {
    const p = await openAt(`#file=trolley.steps&episode=${evalEpisode}&step=40`);
    await untilSeriesArrives(p);
    await p.getByTestId('clip-toggle').click();
    const [download] = await Promise.all([p.waitForEvent('download'), p.getByTestId('export-png').click()]);
    const image = decodePng(new Uint8Array(readFileSync(await download.path())));
    const [stageHeight, lanesHeight] = await p.evaluate(() => [
      document.querySelector<HTMLCanvasElement>('[data-testid=stage] canvas')!.height,
      [...document.querySelectorAll<HTMLCanvasElement>('[data-testid^="lane-"] canvas')].reduce((h, c) => h + c.height, 0),
    ]);
    // The Stage above, the lanes below.
    expect(image.height).toBe(stageHeight + lanesHeight);
    const stage = { width: image.width, height: stageHeight, pixels: image.pixels.subarray(0, image.width * stageHeight * 4) };
    expect(drawnShare(stage, [palette.panel, palette.paper])).toBeGreaterThanOrEqual(0.02);
  });

  it('puts the cursor on the Lanes and on the Ruler at the current step', async () => {
    const p = await openAt(`#file=trolley.steps&episode=${evalEpisode}&step=0`);
    await untilSeriesArrives(p);
    const n = evalSteps.n;
    const centre = async (testId: string) => {
      const box = (await p.getByTestId(testId).boundingBox())!;
      return box.x + box.width / 2;
    };
    const lane = (await p.getByTestId('lane-q').boundingBox())!;
    const plotLeft = lane.x + LANE_GUTTER;
    const plotWidth = lane.width - LANE_GUTTER;
    const ruler = (await p.getByTestId('ruler-cursor').locator('..').boundingBox())!;
    // The Lanes give each step a slot of the plot's width / n and put the line at the slot's
    // centre; the Ruler spans its whole width from the first step to the last. Half a device
    // pixel of snapping, and a pixel of rounding, either way.
    for (const [key, row] of [['Home', 0], ['End', n - 1], ['Home', 0]] as const) {
      await p.keyboard.press(key);
      await expectStep(p, evalSteps.step[row]);
      const lanesAt = plotLeft + ((row + 0.5) / n) * plotWidth;
      const rulerAt = ruler.x + 0.5 + (row / (n - 1)) * (ruler.width - 1);
      await expect.poll(async () => Math.abs((await centre('lanes-cursor')) - lanesAt), { message: `Lanes cursor at row ${row}` }).toBeLessThanOrEqual(1);
      await expect.poll(async () => Math.abs((await centre('ruler-cursor')) - rulerAt), { message: `Ruler cursor at row ${row}` }).toBeLessThanOrEqual(1);
    }
  });

  it('spreads the Ruler over its whole panel, and again when the window is resized', async () => {
    const p = await openAt(`#file=trolley.steps&episode=${evalEpisode}&step=0`);
    // The Ruler's box has 10 px of padding on either side; its scrub surface fills the rest.
    const fills = async () => {
      const panel = (await p.getByTestId('ruler').boundingBox())!;
      const surface = (await p.getByTestId('ruler-cursor').locator('..').boundingBox())!;
      return Math.abs(surface.width - (panel.width - 20));
    };
    await expect.poll(fills).toBeLessThanOrEqual(1);
    await p.setViewportSize({ width: 1800, height: 900 });
    await expect.poll(fills).toBeLessThanOrEqual(1);
  });

  it('asks the browser for no animation frames while nothing changes', async () => {
    const p = await openAt(`#file=trolley.steps&episode=${evalEpisode}&step=0`);
    await untilSeriesArrives(p);
    await p.locator('[data-testid=suspects] button[data-rule]').first().waitFor();
    await p.keyboard.press('ArrowRight');
    await expectStep(p, evalSteps.step[1]);
    // Let the step's own frame and the lanes' redraw go by, then watch for half a second.
    await p.waitForTimeout(300);
    const requested = await p.evaluate(
      () =>
        new Promise<number>((resolve) => {
          let count = 0;
          const original = window.requestAnimationFrame;
          window.requestAnimationFrame = (callback) => {
            count++;
            return original.call(window, callback);
          };
          setTimeout(() => {
            window.requestAnimationFrame = original;
            resolve(count);
          }, 500);
        }),
    );
    // A page that keeps asking for frames makes every key press wait for the display's next one.
    expect(requested).toBe(0);
  });

  it('keeps the episode and step in the URL hash, so a reload returns to them', async () => {
    const other = trolley.episodes.find((e) => e.episode !== evalEpisode && e.length > 12)!;
    const otherSteps = trolley.readEpisode(other.episode);
    const p = await openAt(`#file=trolley.steps&episode=${evalEpisode}&step=0`);
    await p.locator(`[data-testid=shelf] button[data-episode="${other.episode}"]`).click();
    await expect.poll(() => text(p, 'readout-episode')).toBe(String(other.episode));
    await p.keyboard.press('Shift+ArrowRight');
    await p.keyboard.press('ArrowRight');
    await p.keyboard.press('ArrowRight');
    const step = otherSteps.step[12];
    await expectStep(p, step);
    await expect.poll(() => hashOf(p)).toMatchObject({ file: 'trolley.steps', episode: String(other.episode), step: String(step) });

    await p.reload();
    await p.getByTestId('readout-step').waitFor();
    await expectStep(p, step);
    expect(await text(p, 'readout-episode')).toBe(String(other.episode));
  });

  it('jumps to a suspect’s episode and step when it is clicked', async () => {
    const p = await openAt(`#file=trolley.steps&episode=${evalEpisode}&step=0`);
    const buttons = p.locator('[data-testid=suspects] button[data-rule]');
    await buttons.first().waitFor();
    const listed = await buttons.evaluateAll((bs) => bs.map((b) => ({ episode: Number((b as HTMLElement).dataset.episode), step: Number((b as HTMLElement).dataset.step) })));
    // One in another episode, and preferably not at its first step, so both the episode and the step must move.
    const pick = listed.findIndex((s) => s.episode !== evalEpisode && s.step > 0);
    const chosen = pick >= 0 ? pick : listed.findIndex((s) => s.episode !== evalEpisode);
    expect(chosen, 'a suspect outside the open episode').toBeGreaterThanOrEqual(0);
    const { episode, step } = listed[chosen];
    expect(step, 'the suspect names a recorded step').toBeLessThan(trolley.episode(episode).length);

    await buttons.nth(chosen).click();
    await expect.poll(() => text(p, 'readout-episode')).toBe(String(episode));
    await expectStep(p, step);
  });

  it('puts the blow-up of the fast-sync run first among its suspects', async () => {
    const p = await openAt('#file=trolley-fast-sync.steps');
    const first = p.locator('[data-testid=suspects] button[data-rule]').first();
    await first.waitFor();
    expect(['beyond-bound', 'non-finite']).toContain(await first.getAttribute('data-rule'));
  });
});

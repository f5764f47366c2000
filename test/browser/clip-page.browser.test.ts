/**
 * A clip page opens from file:// with no server and no network: it shows the clip's first step,
 * steps with the keys, and shows a note that looks like markup as plain text.
 */
import { execFileSync } from 'node:child_process';
import { mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { chromium, type BrowserContext } from 'playwright-core';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { openStepFilePath } from '../../formats/node.ts';
import { CHROMIUM } from './harness.ts';

const ROOT = join(import.meta.dirname, '..', '..');
const TROLLEY = join(ROOT, 'samples', 'trolley.steps');
const NOTE = 'look here <img src=x onerror=alert(1)>';

let dir: string;
let ctx: BrowserContext;
const problems: string[] = [];
const offline: string[] = [];
let episode: number;
let from: number;
let states: Float32Array;

beforeAll(async () => {
  dir = mkdtempSync(join(tmpdir(), 'ep-clip-page-'));
  const f = openStepFilePath(TROLLEY);
  const info = f.episodes.find((e) => e.length > 80)!;
  episode = info.episode;
  from = 20;
  states = f.readEpisode(episode).state;
  f.close();
  execFileSync(process.execPath, [join(ROOT, 'bin', 'episcope.js'), 'clip', TROLLEY, '--episode', String(episode), '--from', String(from), '--to', String(from + 40), '--target', '#target', '--title', '<b>title</b>', '--note', NOTE, '--page', join(dir, 'clip.html')], { stdio: 'pipe' });
  ctx = await chromium.launchPersistentContext(mkdtempSync(join(tmpdir(), 'ep-')), {
    executablePath: CHROMIUM,
    headless: true,
    viewport: { width: 1400, height: 900 },
    args: ['--headless', '--no-sandbox', '--disable-gpu', '--disable-quic', '--no-first-run', '--disable-background-networking', '--disable-component-update', '--disable-sync'],
  });
  // Every request that is not the page itself or data it made is a failure: the page must need no network.
  await ctx.route('**/*', (route) => {
    const url = route.request().url();
    if (url.startsWith('file://') && url.endsWith('clip.html')) return route.continue();
    if (url.startsWith('data:') || url.startsWith('blob:')) return route.continue();
    offline.push(url);
    return route.abort();
  });
}, 180_000);

afterAll(async () => {
  await ctx?.close();
  rmSync(dir, { recursive: true, force: true });
});

describe('a clip page opened from disk', () => {
  it('shows the clip’s first step, steps with →, and asks the network for nothing', async () => {
    const page = await ctx.newPage();
    // Software WebGL reports reading pixels back on the error channel; it is a performance hint.
    page.on('console', (m) => m.type() === 'error' && problems.push(m.text()));
    page.on('pageerror', (e) => problems.push(e.message));
    page.on('dialog', (d) => {
      problems.push(`a dialog opened: ${d.message()}`);
      void d.dismiss();
    });
    await page.goto(`file://${join(dir, 'clip.html')}`);
    const step = page.locator('[data-testid=readout-step]');
    await expect.poll(() => step.textContent(), { timeout: 20_000 }).toBe(String(from));
    await page.keyboard.press('ArrowRight');
    await page.keyboard.press('ArrowRight');
    await expect.poll(() => step.textContent()).toBe(String(from + 2));
    const x = Number(await page.locator('[data-testid=readout-state-0]').textContent());
    expect(x).toBeCloseTo(states[(from + 2) * 4], 4);
    // The note and the title are text, never markup: no image element, no dialog.
    expect(await page.locator('[data-testid=note-text]').textContent()).toContain(NOTE);
    expect(await page.locator('img').count()).toBe(0);
    expect(await page.title()).toBe('<b>title</b> · episcope clip');
    expect(await page.locator('[data-testid=provenance]').textContent()).toMatch(new RegExp(`trolley\\.steps.*episode ${episode}`));
    expect(offline).toEqual([]);
    expect(problems).toEqual([]);
  }, 60_000);
});

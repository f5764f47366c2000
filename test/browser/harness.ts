/**
 * The browser harness for the viewer's tests and its benchmark: the built viewer served by the real
 * `episcope view` server on a free loopback port, and one headless Chromium for everything.
 *
 * Every page it opens is watched: console errors, uncaught page errors (also from workers) and any
 * request that would leave 127.0.0.1 are collected as problems. Such a request is aborted, so the
 * viewer never downloads anything even when a test forgets to look; the tests fail on any problem.
 */
import { existsSync, mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { inflateSync } from 'node:zlib';
import { chromium, type BrowserContext, type ConsoleMessage, type Page } from 'playwright-core';
import { startViewServer, type ServedFile } from '../../src/cli/view-server.ts';
import { ensureViewerBuilt, VIEWER_DIST } from '../../src/cli/viewer-build.ts';

export const CHROMIUM = '/usr/bin/chromium';

/** The launch flags that give WebGL through software rendering and keep Chromium off the network. */
const CHROMIUM_ARGS = ['--headless', '--no-sandbox', '--disable-gpu', '--disable-quic', '--no-first-run', '--disable-background-networking', '--disable-component-update', '--disable-sync'];


export interface Viewer {
  /** The server's address, ending in '/'. */
  url: string;
  context: BrowserContext;
  /** A fresh, watched page at the viewer with this hash (e.g. '#file=trolley.steps&episode=3&step=0'). */
  open(hash?: string): Promise<Page>;
  /** Problems seen since the last call: console errors, page errors, off-loopback requests. */
  takeProblems(): string[];
  close(): Promise<void>;
}

export interface ViewerOptions {
  viewport?: { width: number; height: number };
  /** Chromium flags added to the ones above (e.g. lifting the frame-rate limit for a benchmark). */
  chromiumArgs?: string[];
}

export async function startViewer(files: ServedFile[], options: ViewerOptions = {}): Promise<Viewer> {
  if (!existsSync(CHROMIUM)) throw new Error(`the viewer's browser tests need Chromium at ${CHROMIUM} (apt-get install chromium)`);
  await ensureViewerBuilt(() => {});
  const server = await startViewServer({ root: VIEWER_DIST, files, target: null, port: 0 });
  const profile = mkdtempSync(join(tmpdir(), 'ep-'));
  let context: BrowserContext;
  try {
    context = await chromium.launchPersistentContext(profile, {
      executablePath: CHROMIUM,
      headless: true,
      args: [...CHROMIUM_ARGS, ...(options.chromiumArgs ?? [])],
      viewport: options.viewport ?? { width: 1400, height: 900 },
    });
  } catch (e) {
    await server.close();
    throw e;
  }
  const problems: string[] = [];

  // Routed for the whole context, so pages and their workers are held to the same rule.
  await context.route('**/*', (route) => {
    const url = new URL(route.request().url());
    if ((url.protocol === 'http:' || url.protocol === 'https:' || url.protocol === 'ws:' || url.protocol === 'wss:') && url.hostname === '127.0.0.1') return route.continue();
    problems.push(`request outside 127.0.0.1: ${route.request().url()}`);
    return route.abort('blockedbyclient');
  });

  const onConsole = (where: string) => (m: ConsoleMessage) => {
    if (m.type() !== 'error') return;
    const text = m.text();
    problems.push(`console error in ${where}: ${text}`);
  };

  // The persistent context opens with one blank page; it is reused as the first page.
  const spare: Page[] = [...context.pages()];
  const open = async (hash = '') => {
    const page = spare.pop() ?? (await context.newPage());
    page.on('console', onConsole('the page'));
    page.on('pageerror', (e) => problems.push(`page error: ${e.message}`));
    page.on('worker', (w) => {
      w.on('console', onConsole(`a worker (${w.url()})`));
    });
    await page.goto(server.url + hash);
    return page;
  };

  return {
    url: server.url,
    context,
    open,
    takeProblems: () => problems.splice(0, problems.length),
    async close() {
      await context.close();
      await server.close();
      rmSync(profile, { recursive: true, force: true });
    },
  };
}

// ─── PNG (W3C PNG specification, 3rd edition): enough to count the pixels of a screenshot ───

export interface Rgba {
  width: number;
  height: number;
  /** Row-major RGBA, 8 bits per channel. */
  pixels: Uint8Array;
}

/** Decode an 8-bit RGB or RGBA, non-interlaced PNG: what Chromium's screenshots are. */
export function decodePng(png: Uint8Array): Rgba {
  const signature = [137, 80, 78, 71, 13, 10, 26, 10];
  if (!signature.every((b, i) => png[i] === b)) throw new Error('decodePng: not a PNG (bad signature)');
  const view = new DataView(png.buffer, png.byteOffset, png.byteLength);
  let width = 0, height = 0, colourType = -1;
  const idat: Uint8Array[] = [];
  for (let at = 8; at + 8 <= png.length; ) {
    const length = view.getUint32(at);
    const type = String.fromCharCode(...png.subarray(at + 4, at + 8));
    const data = png.subarray(at + 8, at + 8 + length);
    if (type === 'IHDR') {
      width = view.getUint32(at + 8);
      height = view.getUint32(at + 12);
      const bitDepth = data[8];
      colourType = data[9];
      const interlace = data[12];
      if (bitDepth !== 8 || (colourType !== 2 && colourType !== 6) || interlace !== 0) {
        throw new Error(`decodePng: bit depth ${bitDepth}, colour type ${colourType}, interlace ${interlace}; expected 8-bit RGB or RGBA, not interlaced`);
      }
    } else if (type === 'IDAT') idat.push(data);
    else if (type === 'IEND') break;
    at += 12 + length; // length, type, data, CRC
  }
  if (colourType < 0) throw new Error('decodePng: no IHDR chunk');
  const channels = colourType === 6 ? 4 : 3;
  const raw = inflateSync(Buffer.concat(idat));
  const stride = width * channels;
  if (raw.length < height * (stride + 1)) throw new Error(`decodePng: ${raw.length} bytes of image data; ${width}×${height} needs ${height * (stride + 1)}`);
  const rows = new Uint8Array(height * stride);
  for (let y = 0; y < height; y++) {
    const filter = raw[y * (stride + 1)];
    const line = raw.subarray(y * (stride + 1) + 1, (y + 1) * (stride + 1));
    const out = rows.subarray(y * stride, (y + 1) * stride);
    const up = y > 0 ? rows.subarray((y - 1) * stride, y * stride) : new Uint8Array(stride);
    for (let i = 0; i < stride; i++) {
      const a = i >= channels ? out[i - channels] : 0;
      const b = up[i];
      const c = i >= channels ? up[i - channels] : 0;
      let predictor: number;
      if (filter === 0) predictor = 0;
      else if (filter === 1) predictor = a;
      else if (filter === 2) predictor = b;
      else if (filter === 3) predictor = (a + b) >> 1;
      else if (filter === 4) {
        const p = a + b - c, pa = Math.abs(p - a), pb = Math.abs(p - b), pc = Math.abs(p - c);
        predictor = pa <= pb && pa <= pc ? a : pb <= pc ? b : c;
      } else throw new Error(`decodePng: row ${y} has filter type ${filter}; expected 0–4`);
      out[i] = (line[i] + predictor) & 0xff;
    }
  }
  if (channels === 4) return { width, height, pixels: rows };
  const pixels = new Uint8Array(width * height * 4);
  for (let p = 0; p < width * height; p++) {
    pixels.set(rows.subarray(p * 3, p * 3 + 3), p * 4);
    pixels[p * 4 + 3] = 255;
  }
  return { width, height, pixels };
}

const rgb = (css: string) => [1, 3, 5].map((i) => Number.parseInt(css.slice(i, i + 2), 16));

/**
 * Share of pixels that are none of the background colours (each channel within `tolerance`):
 * how much of a screenshot was actually drawn.
 */
export function drawnShare(image: Rgba, backgrounds: string[], tolerance = 12): number {
  const bg = backgrounds.map(rgb);
  let drawn = 0;
  const total = image.width * image.height;
  for (let p = 0; p < total; p++) {
    const r = image.pixels[p * 4], g = image.pixels[p * 4 + 1], b = image.pixels[p * 4 + 2];
    if (!bg.some(([R, G, B]) => Math.abs(r - R) <= tolerance && Math.abs(g - G) <= tolerance && Math.abs(b - B) <= tolerance)) drawn++;
  }
  return total ? drawn / total : 0;
}

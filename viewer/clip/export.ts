/**
 * Exports from the viewer: a clip step file, a clip page, a PNG of the Stage and Lanes. The clip
 * itself is made by the same src/clip code as `episcope clip`, so both give the same numbers.
 */
import { writeClip, type ClipRequest } from '../../src/clip/clip.ts';
import { clipPageHtml } from '../../src/clip/page.ts';
import { MemorySink } from '../../src/record/memory-sink.ts';
import type { Session } from '../state/session.svelte.ts';

export interface ClipChoice {
  from: number;
  to: number;
  title: string;
  note: string;
}

export function clipBytes(session: Session, choice: ClipChoice): Uint8Array {
  const f = session.current;
  if (!f) throw new Error('no step file is open');
  const spec = session.targetSpec();
  const req: ClipRequest = {
    episode: session.episode,
    from: choice.from,
    to: choice.to,
    context: session.td.rule === 'nstep' ? Math.max(3, session.td.n) : 3,
    snapshots: spec.kind === 'net' ? [{ role: 'target', trainingStep: 0, id: spec.net.id, layers: spec.net.layers }] : [],
    title: choice.title,
    note: choice.note,
    sourceName: f.name,
  };
  const sink = new MemorySink();
  writeClip(f.file, req, sink);
  return sink.bytes();
}

/** The clip viewer's own code: from this page when it is a clip page, else from the server. */
async function clipBundle(mode: 'server' | 'clip'): Promise<{ js: string; css: string }> {
  if (mode === 'clip') {
    return {
      js: document.getElementById('episcope-app')?.textContent ?? '',
      css: document.getElementById('episcope-style')?.textContent ?? '',
    };
  }
  const [js, css] = await Promise.all(['./clip/clip.js', './clip/clip.css'].map(async (u) => {
    const r = await fetch(u);
    if (!r.ok) throw new Error(`the clip viewer (${u}) is not available from this server (${r.status})`);
    return r.text();
  }));
  return { js, css };
}

export async function clipPage(session: Session, choice: ClipChoice, mode: 'server' | 'clip'): Promise<string> {
  const bytes = clipBytes(session, choice);
  const { js, css } = await clipBundle(mode);
  const name = clipName(session, choice, 'steps');
  return clipPageHtml({ title: choice.title, name, clip: bytes, appJs: js, appCss: css });
}

export function clipName(session: Session, choice: ClipChoice, ext: string): string {
  const base = (session.current?.name ?? 'clip').replace(/\.steps$/, '');
  return `${base}-ep${session.episode}-${choice.from}-${choice.to}.${ext}`;
}

/** Stage above, lanes below, on the page's background: the view as a picture for a report. */
export async function viewPng(stage: HTMLCanvasElement | null): Promise<Blob> {
  const lanes = [...document.querySelectorAll<HTMLCanvasElement>('[data-testid^="lane-"] canvas')];
  const parts = [stage, ...lanes].filter((c): c is HTMLCanvasElement => !!c && c.width > 0 && c.height > 0);
  if (parts.length === 0) throw new Error('nothing is drawn yet');
  const width = Math.max(...parts.map((c) => c.width));
  const height = parts.reduce((h, c) => h + c.height, 0);
  const out = document.createElement('canvas');
  out.width = width;
  out.height = height;
  const g = out.getContext('2d')!;
  g.fillStyle = getComputedStyle(document.documentElement).getPropertyValue('--panel') || '#fbfaf5';
  g.fillRect(0, 0, width, height);
  let y = 0;
  for (const c of parts) {
    g.drawImage(c, 0, y);
    y += c.height;
  }
  return new Promise((resolve, reject) => out.toBlob((b) => (b ? resolve(b) : reject(new Error('the browser could not encode a PNG'))), 'image/png'));
}

export function download(data: Blob | Uint8Array | string, name: string, type: string): void {
  const blob = data instanceof Blob ? data : new Blob([data as BlobPart], { type });
  const url = URL.createObjectURL(blob);
  const a = document.createElement('a');
  a.href = url;
  a.download = name;
  document.body.appendChild(a);
  a.click();
  a.remove();
  setTimeout(() => URL.revokeObjectURL(url), 10_000);
}

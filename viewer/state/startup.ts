/**
 * What the page opens first: the files `episcope view` was given (its /api/session), then the view
 * the URL's hash names. Without a server (a page opened from disk) there is nothing to fetch, and
 * the page waits for a dropped or picked file.
 */
import type { Session } from './session.svelte.ts';

export interface ServedSession {
  files: { name: string; url: string; size: number }[];
  /** A network given with --target, already resolved by the server. */
  target: { source: string; id: string; url: string } | null;
}

export async function loadStartupFiles(session: Session): Promise<void> {
  let served: ServedSession;
  try {
    const res = await fetch('./api/session');
    if (!res.ok) return;
    served = (await res.json()) as ServedSession;
  } catch {
    return;
  }
  for (const f of served.files) {
    const res = await fetch(f.url);
    if (!res.ok) throw new Error(`${f.name}: the server answered ${res.status}`);
    session.addFile(f.name, new Uint8Array(await res.arrayBuffer()));
  }
  if (!session.fromHash(location.hash) && session.files.length) session.selectFile(0);
  if (served.target) {
    const res = await fetch(served.target.url);
    if (res.ok) {
      const { layers } = (await res.json()) as { layers: { inputs: number; outputs: number; activation: string; weights: number[]; bias: number[] }[] };
      session.addExternalTarget({
        source: served.target.source,
        id: served.target.id,
        layers: layers.map((l) => ({ ...l, activation: l.activation as never, weights: Float32Array.from(l.weights), bias: Float32Array.from(l.bias) })),
      });
    }
  }
}

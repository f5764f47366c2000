/**
 * The main thread's side of the analysis worker: one request at a time per kind, answers matched by
 * request number, so a slow answer for an episode the user already left is dropped, never shown.
 */
import type { TdOptions } from '../../src/analysis/td.ts';
import type { Analysis } from './engine.ts';
import type { AnalysisPayload, FromWorker, SeriesPayload, TargetSpec, ToWorker } from './protocol.ts';

export class AnalysisClient implements Analysis {
  private worker: Worker;
  private next = 1;
  private waiting = new Map<number, { resolve: (v: never) => void; reject: (e: Error) => void }>();
  private opened = new Map<string, Promise<void>>();
  private openResolvers = new Map<string, () => void>();

  constructor() {
    this.worker = new Worker(new URL('./analysis.worker.ts', import.meta.url), { type: 'module' });
    this.worker.onmessage = (ev: MessageEvent<FromWorker>) => this.receive(ev.data);
  }

  open(key: string, name: string, bytes: Uint8Array): Promise<void> {
    let p = this.opened.get(key);
    if (!p) {
      p = new Promise<void>((resolve) => this.openResolvers.set(key, resolve));
      this.opened.set(key, p);
      // A copy: the main thread keeps reading its own bytes while the worker owns these.
      const copy = bytes.slice().buffer;
      this.post({ type: 'open', key, name, bytes: copy }, [copy]);
    }
    return p;
  }

  analyse(key: string, target: TargetSpec, td: TdOptions): Promise<AnalysisPayload> {
    return this.request<AnalysisPayload>((request) => ({ type: 'analyse', key, request, target, td }));
  }

  series(key: string, episode: number, target: TargetSpec, td: TdOptions): Promise<SeriesPayload> {
    return this.request<SeriesPayload>((request) => ({ type: 'series', key, request, episode, target, td }));
  }

  private request<T>(make: (request: number) => ToWorker): Promise<T> {
    const request = this.next++;
    return new Promise<T>((resolve, reject) => {
      this.waiting.set(request, { resolve: resolve as (v: never) => void, reject });
      this.post(make(request));
    });
  }

  private post(m: ToWorker, transfer: Transferable[] = []): void {
    this.worker.postMessage(m, transfer);
  }

  private receive(m: FromWorker): void {
    if (m.type === 'opened') {
      this.openResolvers.get(m.key)?.();
      return;
    }
    const w = m.request === null ? undefined : this.waiting.get(m.request);
    if (m.type === 'error') {
      if (w) {
        this.waiting.delete(m.request!);
        w.reject(new Error(m.message));
      } else console.error(`analysis worker: ${m.message}`);
      return;
    }
    if (!w) return;
    this.waiting.delete(m.request);
    w.resolve((m.type === 'analysis' ? m.analysis : m.series) as never);
  }
}

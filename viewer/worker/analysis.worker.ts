/// <reference lib="webworker" />
/** The viewer's analysis worker: the engine off the main thread, so the screen never stalls. */
import { AnalysisEngine } from './engine.ts';
import type { FromWorker, ToWorker } from './protocol.ts';

const engine = new AnalysisEngine();
const post = (m: FromWorker, transfer: Transferable[] = []) => (self as unknown as Worker).postMessage(m, transfer);

self.onmessage = (ev: MessageEvent<ToWorker>) => {
  const m = ev.data;
  try {
    if (m.type === 'open') {
      engine.open(m.key, m.name, new Uint8Array(m.bytes));
      post({ type: 'opened', key: m.key });
    } else if (m.type === 'analyse') {
      post({ type: 'analysis', key: m.key, request: m.request, analysis: engine.analyse(m.key, m.target, m.td) });
    } else {
      const series = engine.series(m.key, m.episode, m.target, m.td);
      const arrays = [series.greedy, series.flips, series.gap, series.maxQ, series.returns, series.valueError, series.targetAge, ...(series.td ? Object.values(series.td) : [])];
      post({ type: 'series', key: m.key, request: m.request, series }, arrays.map((a) => a.buffer));
    }
  } catch (e) {
    post({ type: 'error', key: m.key, request: 'request' in m ? m.request : null, message: (e as Error).message });
  }
};

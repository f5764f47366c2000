/**
 * The view a URL's hash keeps: which file, episode and step, and the lanes' zoom. Reloading the
 * page returns to the same view. Pure, so it is tested without a browser.
 *   #file=trolley.steps&episode=155&step=40&from=0&to=182
 */

export interface ViewHash {
  file: string | null;
  episode: number | null;
  step: number | null;
  from: number | null;
  to: number | null;
}

const KEYS = ['file', 'episode', 'step', 'from', 'to'] as const;

export function encodeHash(v: ViewHash): string {
  const parts: string[] = [];
  for (const k of KEYS) {
    const value = v[k];
    if (value === null || value === undefined) continue;
    parts.push(`${k}=${encodeURIComponent(String(value))}`);
  }
  return parts.length ? `#${parts.join('&')}` : '';
}

/** Unknown keys and malformed numbers are ignored: a hand-edited hash never breaks the page. */
export function decodeHash(hash: string): ViewHash {
  const out: ViewHash = { file: null, episode: null, step: null, from: null, to: null };
  const body = hash.startsWith('#') ? hash.slice(1) : hash;
  for (const part of body.split('&')) {
    const eq = part.indexOf('=');
    if (eq < 0) continue;
    const key = part.slice(0, eq);
    let value: string;
    try {
      value = decodeURIComponent(part.slice(eq + 1));
    } catch {
      continue;
    }
    if (key === 'file') out.file = value;
    else if (key === 'episode' || key === 'step' || key === 'from' || key === 'to') {
      const n = /^\d+$/.test(value) ? Number(value) : NaN;
      if (Number.isSafeInteger(n)) out[key] = n;
    }
  }
  return out;
}

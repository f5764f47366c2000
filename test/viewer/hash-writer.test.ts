/**
 * The URL's hash follows the view, but not with a same-document navigation for every step: it is
 * written once the view is still, and now and then while it keeps moving.
 */
import { afterEach, beforeEach, describe, expect, it, vi } from 'vitest';
import { HashWriter } from '../../viewer/state/hash-writer.ts';

describe('the hash writer', () => {
  let url: string;
  let writes: string[];
  let writer: HashWriter;

  beforeEach(() => {
    vi.useFakeTimers();
    url = '';
    writes = [];
    writer = new HashWriter((hash) => { writes.push(hash); url = hash; }, () => url, 250, 2000);
  });
  afterEach(() => vi.useRealTimers());

  it('writes a burst of steps once, as the last of them, when the view has been still for the quiet time', () => {
    for (let step = 1; step <= 20; step++) {
      writer.want(`#step=${step}`);
      vi.advanceTimersByTime(30);
    }
    expect(writes).toEqual([]);
    vi.advanceTimersByTime(250 - 30 - 1);
    expect(writes).toEqual([]);
    vi.advanceTimersByTime(1);
    expect(writes).toEqual(['#step=20']);
  });

  it('writes at least every maxWait while the view never stops (playback)', () => {
    for (let t = 0; t < 5000; t += 10) {
      writer.want(`#step=${t}`);
      vi.advanceTimersByTime(10);
    }
    expect(writes).toEqual(['#step=1990', '#step=3990']);
    vi.advanceTimersByTime(250);
    expect(writes).toEqual(['#step=1990', '#step=3990', '#step=4990']);
  });

  it('writes nothing when the URL already holds the hash', () => {
    url = '#step=3';
    writer.want('#step=3');
    vi.advanceTimersByTime(2000);
    expect(writes).toEqual([]);
  });

  it('writes at once on flush, and nothing after cancel', () => {
    writer.want('#step=1');
    writer.flush();
    expect(writes).toEqual(['#step=1']);
    writer.want('#step=2');
    writer.cancel();
    vi.advanceTimersByTime(5000);
    expect(writes).toEqual(['#step=1']);
  });
});

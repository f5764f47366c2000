/**
 * Writes the view's hash into the URL once the view has been still for a moment, and at least
 * every few seconds while it keeps moving (playback), always ending on the latest view.
 *
 * Every write is a same-document navigation, and the browser restyles the page for it (a new
 * fragment can change what `:target` matches): 1–5 ms on the main thread, as much as the rest of
 * a scrub step's own work, and a key press that arrives meanwhile waits for it. So no write
 * happens while the keys are moving the step. Browsers also throttle a page that replaces its URL
 * hundreds of times in a few seconds, which playback at speed would.
 */
export class HashWriter {
  private pending: string | null = null;
  private quiet: ReturnType<typeof setTimeout> | null = null;
  private deadline: ReturnType<typeof setTimeout> | null = null;

  /**
   * @param write replaces the URL's hash (called only with a hash that differs from `current()`)
   * @param current the hash the URL holds now
   * @param quietMs how long the view must stay still before its hash is written
   * @param maxWaitMs the longest a change waits while the view keeps moving
   */
  constructor(
    private readonly write: (hash: string) => void,
    private readonly current: () => string,
    private readonly quietMs = 250,
    private readonly maxWaitMs = 2000,
  ) {}

  /** The view changed: its hash reaches the URL once the view is still, or within `maxWaitMs`. */
  want(hash: string): void {
    this.pending = hash;
    if (this.quiet !== null) clearTimeout(this.quiet);
    this.quiet = setTimeout(() => this.flush(), this.quietMs);
    this.deadline ??= setTimeout(() => this.flush(), this.maxWaitMs);
  }

  /** Write what is pending now. */
  flush(): void {
    const hash = this.pending;
    this.cancel();
    if (hash !== null && hash !== this.current()) this.write(hash);
  }

  /** Drop what is pending, writing nothing. */
  cancel(): void {
    if (this.quiet !== null) clearTimeout(this.quiet);
    if (this.deadline !== null) clearTimeout(this.deadline);
    this.quiet = this.deadline = null;
    this.pending = null;
  }
}

/**
 * The fields of a log that `episcope import` reads: one step per JSON Lines line (one JSON object
 * a line) or per CSV row (RFC 4180, with a header row naming the columns).
 *
 *   field         JSON Lines                      CSV column(s)                       required
 *   ───────────── ─────────────────────────────── ─────────────────────────────────── ─────────
 *   episode       integer ≥ 0                     episode                             yes
 *   step          integer ≥ 0                     step                                yes
 *   state         array of D numbers              state.0 … state.{D−1}, or           yes
 *                                                 state.<name> / <name> (--state-dims)
 *   action        integer 0..A−1, or a name       action                              yes
 *                 from --actions
 *   reward        number                          reward                              yes
 *   terminal      true / false                    terminal (true/false/1/0)           yes
 *   truncated     true / false                    truncated (true/false/1/0)          yes
 *   q             array of A numbers              q.0 … q.{A−1}, or q.<action name>   yes
 *   explored      true / false (default false)    explored                            no
 *   epsilon       number                          epsilon                             no
 *
 * Read from the last line of an episode only (a logger may write them on every line, e.g. the
 * next state as `final_state`; only the last line's values describe how the episode ended):
 *
 *   failed        true / false                    failed        default: the last step is terminal
 *   final_state   array of D numbers              final_state.0 … (or final_state.<name>)
 *   final_q       array of A numbers              final_q.0 …   (or final_q.<action name>)
 *   mode          string                          mode          default "train"
 *   reason        string                          reason        default ""
 *
 * Numbers: JSON has no NaN or infinities, so the strings "NaN", "Infinity" and "-Infinity" stand
 * for them; CSV cells may also say nan, inf, -inf, infinity in any case. They are kept as values —
 * a NaN in Q is evidence, not noise. In CSV an empty cell is an absent optional field; in JSON an
 * absent key or null.
 *
 * Order: the steps of an episode are contiguous and in order, and episode numbers go up (a new
 * number ends the previous episode). `step` starts at 0 in every episode (or at 1 throughout, for
 * a log that counts from 1) and goes up by 1. A terminal or truncated step is its episode's last.
 * The step file numbers the imported episodes 0, 1, 2, … in the order they come; when the log's
 * own numbers differ, the header's run info keeps them as `logEpisodes`.
 */

/** One parsed step: a scratch row the parsers fill and the sequence hands on to the recorder. */
export interface StepRow {
  episode: number;
  step: number;
  state: ArrayLike<number>;
  action: number;
  reward: number;
  terminal: boolean;
  truncated: boolean;
  explored: boolean;
  epsilon: number | undefined;
  q: ArrayLike<number>;
  /** End-of-episode fields as this line gives them; only the episode's last line's are used. */
  failed: boolean | undefined;
  finalState: ArrayLike<number> | null;
  finalQ: ArrayLike<number> | null;
  mode: string | undefined;
  reason: string | undefined;
}

/**
 * The sizes and names every line must match. D and A are null until they are known: given by
 * --state-dims / --actions, by a CSV header row, or taken from the first valid line.
 */
export interface LineShape {
  D: number | null;
  A: number | null;
  /** Action name → index, from --actions; null when actions are indices only. */
  actionIndex: Map<string, number> | null;
  stateNames: readonly string[] | null;
}

/** The keys a JSON line may have; others are reported once as ignored. */
export const JSON_FIELDS = [
  'episode', 'step', 'state', 'action', 'reward', 'terminal', 'truncated', 'q',
  'explored', 'epsilon', 'failed', 'final_state', 'final_q', 'mode', 'reason',
] as const;

export function emptyRow(): StepRow {
  return {
    episode: -1,
    step: -1,
    state: [],
    action: 0,
    reward: 0,
    terminal: false,
    truncated: false,
    explored: false,
    epsilon: undefined,
    q: [],
    failed: undefined,
    finalState: null,
    finalQ: null,
    mode: undefined,
    reason: undefined,
  };
}

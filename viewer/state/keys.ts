/**
 * The viewer's keys (../shared/NAMING.md, "Keys in the viewer"): a key event in, an action out.
 * Pure, so the mapping is tested without a browser.
 */
export type KeyAction =
  | { kind: 'step'; by: number }
  | { kind: 'home' }
  | { kind: 'end' }
  | { kind: 'play' }
  | { kind: 'in' }
  | { kind: 'out' }
  | { kind: 'flip'; direction: 1 | -1 }
  | { kind: 'suspect' };

export function keyAction(ev: { key: string; shiftKey: boolean; ctrlKey?: boolean; metaKey?: boolean; altKey?: boolean }): KeyAction | null {
  if (ev.ctrlKey || ev.metaKey || ev.altKey) return null;
  switch (ev.key) {
    case 'ArrowRight':
      return { kind: 'step', by: ev.shiftKey ? 10 : 1 };
    case 'ArrowLeft':
      return { kind: 'step', by: ev.shiftKey ? -10 : -1 };
    case 'Home':
      return { kind: 'home' };
    case 'End':
      return { kind: 'end' };
    case ' ':
      return { kind: 'play' };
    case '[':
      return { kind: 'in' };
    case ']':
      return { kind: 'out' };
    case 'n':
      return { kind: 'flip', direction: 1 };
    case 'N':
      return { kind: 'flip', direction: -1 };
    case 's':
      return { kind: 'suspect' };
    default:
      return null;
  }
}

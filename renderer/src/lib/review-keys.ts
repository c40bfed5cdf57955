import type { ReviewAction } from '../../../src/api/contract.js';

/**
 * Keyboard shortcuts of the Review screen, so an analyst can clear a queue without the mouse:
 * ↓/j next, ↑/p previous, k keep, x exclude, 1–9 move to that segment (as numbered on screen),
 * n write a note. Typing in a text box never triggers them.
 */
export type ReviewCommand =
  | { type: 'next' }
  | { type: 'previous' }
  | { type: 'decide'; action: ReviewAction; segmentNumber?: number }
  | { type: 'focus-note' };

export const reviewShortcutHelp: { keys: string; does: string }[] = [
  { keys: '↓ or j', does: 'next customer' },
  { keys: '↑ or p', does: 'previous customer' },
  { keys: 'k', does: 'keep in the model segment' },
  { keys: '1–9', does: 'move to segment number' },
  { keys: 'x', does: 'exclude from campaigns' },
  { keys: 'n', does: 'write a note' },
];

export function reviewCommandForKey(
  key: string,
  modifiers: { ctrl: boolean; meta: boolean; alt: boolean; inTextField: boolean },
  segmentCount: number,
): ReviewCommand | null {
  if (modifiers.ctrl || modifiers.meta || modifiers.alt || modifiers.inTextField) return null;
  switch (key) {
    case 'ArrowDown':
    case 'j':
      return { type: 'next' };
    case 'ArrowUp':
    case 'p':
      return { type: 'previous' };
    case 'k':
      return { type: 'decide', action: 'keep' };
    case 'x':
      return { type: 'decide', action: 'exclude' };
    case 'n':
      return { type: 'focus-note' };
  }
  if (/^[1-9]$/.test(key)) {
    const segmentNumber = Number(key);
    return segmentNumber <= segmentCount ? { type: 'decide', action: 'move', segmentNumber } : null;
  }
  return null;
}

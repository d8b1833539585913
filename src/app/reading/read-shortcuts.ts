import { VERDICTS, type Measure, type Verdict } from './read-labels';

/** What a key press asks the read workspace to do. */
export type ReadAction =
  | { readonly kind: 'next-effort' }
  | { readonly kind: 'previous-effort' }
  | { readonly kind: 'set-verdict'; readonly measure: Measure; readonly verdict: Verdict }
  | { readonly kind: 'save' }
  | { readonly kind: 'reset-zoom' }
  | { readonly kind: 'toggle-help' };

/** The parts of a `KeyboardEvent` the mapping looks at. */
export interface KeyPress {
  readonly key: string;
  /** Physical key (`Digit1`), so Shift+1 is found whatever character the layout gives it. */
  readonly code: string;
  readonly shiftKey: boolean;
  readonly ctrlKey: boolean;
  readonly metaKey: boolean;
  readonly altKey: boolean;
}

/**
 * Where the keyboard focus is: typing into a text field (letters and digits are text there), on a
 * control that uses the arrow keys itself (radio groups, selects), or anywhere else.
 */
export type FocusPlace = 'text-entry' | 'arrow-control' | 'elsewhere';

/** The shortcuts as the help panel lists them. */
export const READ_SHORTCUTS: readonly { readonly keys: string; readonly action: string }[] = [
  { keys: 'J or →', action: 'Next effort' },
  { keys: 'K or ←', action: 'Previous effort' },
  { keys: '1 / 2 / 3', action: 'FEV1 verdict: acceptable / usable / not acceptable' },
  { keys: 'Shift + 1 / 2 / 3', action: 'FVC verdict: acceptable / usable / not acceptable' },
  { keys: 'S, or Ctrl + S anywhere', action: 'Save the draft' },
  { keys: 'Z', action: 'Reset the zoom of the curves' },
  { keys: '?', action: 'Show or hide this list' },
];

const DIGIT_CODES: Readonly<Record<string, number>> = {
  Digit1: 0,
  Digit2: 1,
  Digit3: 2,
  Numpad1: 0,
  Numpad2: 1,
  Numpad3: 2,
};

/**
 * The workspace action of a key press, or null to leave the key to the browser. Letters and
 * digits never act while the reader types; Ctrl/Cmd+S saves from anywhere, other modified keys
 * stay the browser's.
 */
export function readActionFor(press: KeyPress, focus: FocusPlace): ReadAction | null {
  if ((press.ctrlKey || press.metaKey) && !press.altKey && press.key.toLowerCase() === 's') return { kind: 'save' };
  if (press.ctrlKey || press.metaKey || press.altKey || focus === 'text-entry') return null;

  const verdictPosition = DIGIT_CODES[press.code];
  if (verdictPosition !== undefined) {
    return { kind: 'set-verdict', measure: press.shiftKey ? 'fvc' : 'fev1', verdict: VERDICTS[verdictPosition] };
  }
  if (press.key === '?') return { kind: 'toggle-help' };
  if (press.shiftKey) return null;

  switch (press.key) {
    case 'j':
      return { kind: 'next-effort' };
    case 'k':
      return { kind: 'previous-effort' };
    case 's':
      return { kind: 'save' };
    case 'z':
      return { kind: 'reset-zoom' };
    case 'ArrowRight':
      return focus === 'elsewhere' ? { kind: 'next-effort' } : null;
    case 'ArrowLeft':
      return focus === 'elsewhere' ? { kind: 'previous-effort' } : null;
    default:
      return null;
  }
}

/** Where the focus is, judged from the element that has it. */
export function focusPlaceOf(target: EventTarget | null): FocusPlace {
  if (!(target instanceof HTMLElement)) return 'elsewhere';
  if (target.isContentEditable || target instanceof HTMLTextAreaElement) return 'text-entry';
  if (target instanceof HTMLInputElement) {
    if (target.type === 'radio') return 'arrow-control';
    if (target.type === 'checkbox' || target.type === 'button' || target.type === 'submit') return 'elsewhere';
    return 'text-entry';
  }
  if (target.closest('[role="radiogroup"], [role="listbox"], [role="combobox"], [role="slider"], [role="tablist"], select')) {
    return 'arrow-control';
  }
  return 'elsewhere';
}

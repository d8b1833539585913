import { describe, expect, it } from '@jest/globals';

import { focusPlaceOf, readActionFor, type FocusPlace, type KeyPress, type ReadAction } from './read-shortcuts';

function press(key: string, code: string, modifiers: Partial<Pick<KeyPress, 'shiftKey' | 'ctrlKey' | 'metaKey' | 'altKey'>> = {}): KeyPress {
  return { key, code, shiftKey: false, ctrlKey: false, metaKey: false, altKey: false, ...modifiers };
}

// The reading room's own shortcut scheme (common practice for keyboard-driven review tools).
describe('readActionFor', () => {
  const cases: { name: string; press: KeyPress; focus: FocusPlace; action: ReadAction | null }[] = [
    { name: 'J: next effort', press: press('j', 'KeyJ'), focus: 'elsewhere', action: { kind: 'next-effort' } },
    { name: 'K: previous effort', press: press('k', 'KeyK'), focus: 'elsewhere', action: { kind: 'previous-effort' } },
    { name: 'right arrow: next effort', press: press('ArrowRight', 'ArrowRight'), focus: 'elsewhere', action: { kind: 'next-effort' } },
    { name: 'left arrow: previous effort', press: press('ArrowLeft', 'ArrowLeft'), focus: 'elsewhere', action: { kind: 'previous-effort' } },
    {
      name: '1: FEV1 acceptable',
      press: press('1', 'Digit1'),
      focus: 'elsewhere',
      action: { kind: 'set-verdict', measure: 'fev1', verdict: 'acceptable' },
    },
    {
      name: '2: FEV1 usable',
      press: press('2', 'Digit2'),
      focus: 'elsewhere',
      action: { kind: 'set-verdict', measure: 'fev1', verdict: 'usable' },
    },
    {
      name: '3 on the number pad: FEV1 not acceptable',
      press: press('3', 'Numpad3'),
      focus: 'elsewhere',
      action: { kind: 'set-verdict', measure: 'fev1', verdict: 'not_acceptable' },
    },
    {
      name: 'Shift+1 (typed as "!"): FVC acceptable',
      press: press('!', 'Digit1', { shiftKey: true }),
      focus: 'elsewhere',
      action: { kind: 'set-verdict', measure: 'fvc', verdict: 'acceptable' },
    },
    {
      name: 'Shift+3 (typed as "#"): FVC not acceptable',
      press: press('#', 'Digit3', { shiftKey: true }),
      focus: 'elsewhere',
      action: { kind: 'set-verdict', measure: 'fvc', verdict: 'not_acceptable' },
    },
    {
      name: 'digits still set verdicts with a radio button focused',
      press: press('2', 'Digit2', { shiftKey: true }),
      focus: 'arrow-control',
      action: { kind: 'set-verdict', measure: 'fvc', verdict: 'usable' },
    },
    { name: 'S: save', press: press('s', 'KeyS'), focus: 'elsewhere', action: { kind: 'save' } },
    { name: 'Ctrl+S saves even while typing', press: press('s', 'KeyS', { ctrlKey: true }), focus: 'text-entry', action: { kind: 'save' } },
    { name: 'Cmd+S saves too', press: press('s', 'KeyS', { metaKey: true }), focus: 'elsewhere', action: { kind: 'save' } },
    { name: 'Z: reset zoom', press: press('z', 'KeyZ'), focus: 'elsewhere', action: { kind: 'reset-zoom' } },
    { name: '?: help', press: press('?', 'Slash', { shiftKey: true }), focus: 'elsewhere', action: { kind: 'toggle-help' } },
    { name: 'letters are text in a text box', press: press('j', 'KeyJ'), focus: 'text-entry', action: null },
    { name: 'digits are text in a text box', press: press('1', 'Digit1'), focus: 'text-entry', action: null },
    { name: 'arrows stay with a radio group', press: press('ArrowRight', 'ArrowRight'), focus: 'arrow-control', action: null },
    { name: 'Ctrl+1 stays the browser’s', press: press('1', 'Digit1', { ctrlKey: true }), focus: 'elsewhere', action: null },
    { name: 'Alt+J stays the browser’s', press: press('j', 'KeyJ', { altKey: true }), focus: 'elsewhere', action: null },
    { name: 'Shift+J does nothing', press: press('J', 'KeyJ', { shiftKey: true }), focus: 'elsewhere', action: null },
    { name: '4 is not a verdict', press: press('4', 'Digit4'), focus: 'elsewhere', action: null },
  ];

  it.each(cases)('$name', ({ press: keyPress, focus, action }) => {
    expect(readActionFor(keyPress, focus)).toEqual(action);
  });
});

describe('focusPlaceOf', () => {
  function element(html: string, selector: string): HTMLElement {
    const host = document.createElement('div');
    host.innerHTML = html;
    return host.querySelector<HTMLElement>(selector)!;
  }

  it.each([
    { name: 'a text area', html: '<textarea></textarea>', selector: 'textarea', place: 'text-entry' },
    { name: 'a text input', html: '<input type="text">', selector: 'input', place: 'text-entry' },
    { name: 'a radio button', html: '<input type="radio">', selector: 'input', place: 'arrow-control' },
    { name: 'a checkbox', html: '<input type="checkbox">', selector: 'input', place: 'elsewhere' },
    { name: 'inside a radio group', html: '<div role="radiogroup"><label>x</label></div>', selector: 'label', place: 'arrow-control' },
    { name: 'a button', html: '<button>Save</button>', selector: 'button', place: 'elsewhere' },
  ] as const)('$name is $place', ({ html, selector, place }) => {
    expect(focusPlaceOf(element(html, selector))).toBe(place);
  });

  it('treats a missing target as elsewhere', () => {
    expect(focusPlaceOf(null)).toBe('elsewhere');
  });
});

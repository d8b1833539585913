import { createHash } from 'node:crypto';
import { describe, expect, it } from '@jest/globals';
import { canonicalJson, contentHash } from './content-hash.js';

describe('canonicalJson', () => {
  it.each<{ name: string; content: unknown; expected: string }>([
    { name: 'sorts keys', content: { b: 1, a: 2 }, expected: '{"a":2,"b":1}' },
    { name: 'sorts nested keys', content: { z: { y: 1, x: [{ d: 1, c: 2 }] } }, expected: '{"z":{"x":[{"c":2,"d":1}],"y":1}}' },
    { name: 'keeps array order', content: [3, 1, 2], expected: '[3,1,2]' },
    { name: 'leaves out undefined members', content: { a: undefined, b: null }, expected: '{"b":null}' },
    { name: 'writes undefined array items as null', content: [undefined, 1], expected: '[null,1]' },
    { name: 'writes dates as ISO text', content: { at: new Date('2026-12-01T09:00:00Z') }, expected: '{"at":"2026-12-01T09:00:00.000Z"}' },
    { name: 'writes a bare string', content: 'read', expected: '"read"' },
    { name: 'writes nothing as null', content: undefined, expected: 'null' },
  ])('$name', ({ content, expected }) => {
    expect(canonicalJson(content)).toBe(expected);
  });
});

describe('contentHash', () => {
  it('is the SHA-256 of the canonical JSON, so key order does not matter', () => {
    const expected = createHash('sha256').update('{"a":1,"b":[2,3]}').digest('hex');
    expect(contentHash({ b: [2, 3], a: 1 })).toBe(expected);
    expect(contentHash({ a: 1, b: [2, 3] })).toBe(expected);
  });

  it.each<{ name: string; changed: unknown }>([
    { name: 'a changed verdict', changed: { verdicts: [{ effortIndex: 0, fev1Verdict: 'usable' }], feedbackText: 'Coach a faster start.' } },
    { name: 'a changed feedback text', changed: { verdicts: [{ effortIndex: 0, fev1Verdict: 'acceptable' }], feedbackText: 'Coach a faster start' } },
    { name: 'a reordered array', changed: { verdicts: [], feedbackText: 'Coach a faster start.', extra: [{ effortIndex: 0, fev1Verdict: 'acceptable' }] } },
  ])('differs after $name', ({ changed }) => {
    const signed = { verdicts: [{ effortIndex: 0, fev1Verdict: 'acceptable' }], feedbackText: 'Coach a faster start.' };
    expect(contentHash(changed)).not.toBe(contentHash(signed));
  });
});

import { describe, expect, it } from '@jest/globals';
import { effectiveDualRead, readDueAt, readEligibility, readerBlinding, type ReadEligibility, type ReadOfSession } from './read-queue-rules.js';

const ME = 'reader-me';
const OTHER = 'reader-other';
const read = (readerId: string, kind: ReadOfSession['kind'], status: ReadOfSession['status']): ReadOfSession => ({ readerId, kind, status });

describe('readEligibility (common practice for blinded central over-reading)', () => {
  it.each<{ name: string; status: string; dualRead: boolean; reads: ReadOfSession[]; expected: ReadEligibility }>([
    { name: 'a checked session with no reads is a first read', status: 'checked', dualRead: false, reads: [], expected: { eligible: true, kind: 'first' } },
    { name: 'a single-design session claimed by another is taken', status: 'in-reading', dualRead: false, reads: [read(OTHER, 'first', 'in-progress')], expected: { eligible: false, reason: 'already-claimed' } },
    { name: 'a released claim does not count', status: 'checked', dualRead: false, reads: [read(OTHER, 'first', 'withdrawn')], expected: { eligible: true, kind: 'first' } },
    { name: 'my own released claim does not block me', status: 'checked', dualRead: false, reads: [read(ME, 'first', 'withdrawn')], expected: { eligible: true, kind: 'first' } },
    { name: 'a dual session with one read by another is a second read', status: 'in-reading', dualRead: true, reads: [read(OTHER, 'first', 'signed')], expected: { eligible: true, kind: 'second' } },
    { name: 'a dual session I read is never mine again', status: 'in-reading', dualRead: true, reads: [read(ME, 'first', 'signed')], expected: { eligible: false, reason: 'already-yours' } },
    { name: 'a dual session with two live reads is taken', status: 'in-reading', dualRead: true, reads: [read(OTHER, 'first', 'signed'), read('third', 'second', 'in-progress')], expected: { eligible: false, reason: 'already-claimed' } },
    { name: 'adjudication reads do not count as over-reads', status: 'in-reading', dualRead: true, reads: [read(OTHER, 'first', 'signed'), read('adj', 'adjudication', 'in-progress')], expected: { eligible: true, kind: 'second' } },
    { name: 'a session in adjudication awaits no read', status: 'adjudication', dualRead: true, reads: [], expected: { eligible: false, reason: 'not-awaiting-read' } },
    { name: 'a final session awaits no read', status: 'final', dualRead: false, reads: [], expected: { eligible: false, reason: 'not-awaiting-read' } },
    { name: 'a session without a checked file awaits no read', status: 'awaiting-file', dualRead: false, reads: [], expected: { eligible: false, reason: 'not-awaiting-read' } },
  ])('$name', ({ status, dualRead, reads, expected }) => {
    expect(readEligibility({ status, dualRead }, reads, ME)).toEqual(expected);
  });
});

describe('effectiveDualRead', () => {
  it.each([
    { stored: false, live: 0, decided: true, expected: true },
    { stored: true, live: 0, decided: false, expected: false },
    { stored: true, live: 1, decided: false, expected: true },
    { stored: false, live: 1, decided: true, expected: false },
  ])('stored $stored with $live live reads, decision $decided → $expected', ({ stored, live, decided, expected }) => {
    expect(effectiveDualRead(stored, live, () => decided)).toBe(expected);
  });
});

describe('readDueAt', () => {
  it.each([
    { checkedAt: '2026-12-01T09:00:00.000Z', hours: 48, expected: '2026-12-03T09:00:00.000Z' },
    { checkedAt: '2026-12-31T23:30:00.000Z', hours: 1, expected: '2027-01-01T00:30:00.000Z' },
  ])('$checkedAt + $hours h = $expected', ({ checkedAt, hours, expected }) => {
    expect(readDueAt(checkedAt, hours)).toBe(expected);
  });
});

describe('readerBlinding', () => {
  it.each([
    {
      json: '{"readersSeeVisit":true,"readersSeeTimepoint":true,"readersSeeBronchodilator":true,"monitorsBlinded":true}',
      expected: { showVisit: true, showTimepoint: true, showBronchodilator: true },
    },
    { json: '{"readersSeeVisit":true}', expected: { showVisit: true, showTimepoint: false, showBronchodilator: false } },
    { json: '{"readersSeeVisit":"yes"}', expected: { showVisit: false, showTimepoint: false, showBronchodilator: false } },
    { json: 'not json', expected: { showVisit: false, showTimepoint: false, showBronchodilator: false } },
  ])('$json', ({ json, expected }) => {
    expect(readerBlinding(json)).toEqual(expected);
  });
});

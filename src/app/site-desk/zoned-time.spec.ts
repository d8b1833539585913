import { describe, expect, it } from '@jest/globals';

import {
  formatInZone,
  formatUtcOffset,
  instantToZonedLocal,
  utcOffsetMinutes,
  zonedLocalToInstant,
} from './zoned-time';

// Offsets and change-over dates are the zone rules of the IANA tz database (tzdata 2025):
// Europe/Oslo CET/CEST (EU rule: last Sunday of March and October, 01:00 UTC),
// America/Toronto EST/EDT (US rule: second Sunday of March, first Sunday of November, 02:00 local),
// Africa/Johannesburg SAST all year, Asia/Kolkata IST all year, America/St_Johns NST/NDT.
describe('zonedLocalToInstant', () => {
  it.each([
    ['Europe/Oslo', 'winter', '2025-01-15T09:30', '2025-01-15T09:30:00+01:00'],
    ['Europe/Oslo', 'summer', '2025-07-15T09:30', '2025-07-15T09:30:00+02:00'],
    ['America/Toronto', 'winter', '2025-01-15T09:30', '2025-01-15T09:30:00-05:00'],
    ['America/Toronto', 'summer', '2025-07-15T09:30', '2025-07-15T09:30:00-04:00'],
    ['Africa/Johannesburg', 'winter (north)', '2025-01-15T09:30', '2025-01-15T09:30:00+02:00'],
    ['Africa/Johannesburg', 'summer (north)', '2025-07-15T09:30', '2025-07-15T09:30:00+02:00'],
    ['Asia/Kolkata', 'any day', '2025-07-15T09:30', '2025-07-15T09:30:00+05:30'],
    ['America/St_Johns', 'winter', '2025-01-15T09:30', '2025-01-15T09:30:00-03:30'],
    ['Europe/Oslo', 'the day after the spring change', '2025-03-31T00:15', '2025-03-31T00:15:00+02:00'],
    ['Europe/Oslo', 'just before the spring change', '2025-03-30T01:59', '2025-03-30T01:59:00+01:00'],
  ])('%s (%s): wall-clock %s is %s', (timeZone, _season, local, expected) => {
    expect(zonedLocalToInstant(local, timeZone)).toEqual({ ok: true, iso: expected, offset: expected.slice(-6) });
  });

  it.each([
    ['Europe/Oslo', '2025-03-30T02:30'],
    ['America/Toronto', '2025-03-09T02:30'],
  ])('refuses %s %s, which the clocks skipped', (timeZone, local) => {
    expect(zonedLocalToInstant(local, timeZone)).toEqual({ ok: false, problem: 'skipped' });
  });

  it.each([
    ['Europe/Oslo', '2025-10-26T02:30', '2025-10-26T02:30:00+02:00'],
    ['America/Toronto', '2025-11-02T01:30', '2025-11-02T01:30:00-04:00'],
  ])('reads %s %s, shown twice, as its first occurrence', (timeZone, local, expected) => {
    expect(zonedLocalToInstant(local, timeZone)).toMatchObject({ ok: true, iso: expected });
  });

  it.each(['', '2025-01-15', '15/01/2025 09:30', '2025-02-30T09:30', '2025-01-15T25:00'])(
    'calls %j malformed',
    (local) => {
      expect(zonedLocalToInstant(local, 'Europe/Oslo')).toEqual({ ok: false, problem: 'malformed' });
    },
  );

  it('gives an instant that the browser reads back as the same moment', () => {
    const result = zonedLocalToInstant('2025-07-15T09:30', 'America/Toronto');
    expect(result.ok && new Date(result.iso).toISOString()).toBe('2025-07-15T13:30:00.000Z');
  });
});

describe('utcOffsetMinutes', () => {
  it.each([
    ['Europe/Oslo', '2025-01-15T12:00:00Z', 60],
    ['Europe/Oslo', '2025-07-15T12:00:00Z', 120],
    ['America/Toronto', '2025-01-15T12:00:00Z', -300],
    ['America/Toronto', '2025-07-15T12:00:00Z', -240],
    ['Africa/Johannesburg', '2025-07-15T12:00:00Z', 120],
    ['UTC', '2025-07-15T12:00:00Z', 0],
    // One second either side of the EU change-over at 01:00 UTC on 30 March 2025.
    ['Europe/Oslo', '2025-03-30T00:59:59Z', 60],
    ['Europe/Oslo', '2025-03-30T01:00:00Z', 120],
  ])('%s at %s is %i minutes ahead of UTC', (timeZone, instant, minutes) => {
    expect(utcOffsetMinutes(new Date(instant), timeZone)).toBe(minutes);
  });
});

describe('formatUtcOffset', () => {
  it.each([
    [0, '+00:00'],
    [60, '+01:00'],
    [-240, '-04:00'],
    [330, '+05:30'],
    [-210, '-03:30'],
  ])('writes %i minutes as %s', (minutes, text) => {
    expect(formatUtcOffset(minutes)).toBe(text);
  });
});

describe('instantToZonedLocal', () => {
  it.each([
    ['2025-01-15T08:30:00Z', 'Europe/Oslo', '2025-01-15T09:30'],
    ['2025-07-15T13:30:00Z', 'America/Toronto', '2025-07-15T09:30'],
    ['2025-01-15T23:30:00Z', 'Africa/Johannesburg', '2025-01-16T01:30'],
  ])('shows %s in %s as %s', (instant, timeZone, local) => {
    expect(instantToZonedLocal(new Date(instant), timeZone)).toBe(local);
  });
});

describe('formatInZone', () => {
  it("shows the time on the site's clock, not the browser's", () => {
    expect(formatInZone('2025-01-15T08:30:00Z', 'Europe/Oslo', 'en-GB')).toBe('15 Jan 2025, 09:30 CET');
    expect(formatInZone('2025-01-15T08:30:00Z', 'America/Toronto', 'en-GB')).toContain('03:30');
  });

  it('shows nothing for an unreadable date', () => {
    expect(formatInZone('not a date', 'Europe/Oslo', 'en-GB')).toBe('');
  });
});

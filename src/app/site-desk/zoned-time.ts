/**
 * Wall-clock times at a site, read and written in the site's IANA time zone whatever zone the
 * browser is in. Pure: no Angular, no clock; the zone rules come from the platform's `Intl`.
 */

/** `YYYY-MM-DDTHH:mm`, the value format of `<input type="datetime-local">`. */
const LOCAL_DATE_TIME = /^(\d{4})-(\d{2})-(\d{2})T(\d{2}):(\d{2})(?::(\d{2}))?$/;

const MINUTE_MS = 60_000;

const wallClockFormats = new Map<string, Intl.DateTimeFormat>();

/** One formatter per zone: building them is far slower than using them. */
function wallClockFormat(timeZone: string): Intl.DateTimeFormat {
  let format = wallClockFormats.get(timeZone);
  if (!format) {
    format = new Intl.DateTimeFormat('en-US', {
      timeZone,
      hourCycle: 'h23',
      year: 'numeric',
      month: '2-digit',
      day: '2-digit',
      hour: '2-digit',
      minute: '2-digit',
      second: '2-digit',
    });
    wallClockFormats.set(timeZone, format);
  }
  return format;
}

interface WallClock {
  readonly year: number;
  readonly month: number;
  readonly day: number;
  readonly hour: number;
  readonly minute: number;
  readonly second: number;
}

function wallClockAt(instantMs: number, timeZone: string): WallClock {
  const parts: Record<string, number> = {};
  for (const part of wallClockFormat(timeZone).formatToParts(new Date(instantMs))) {
    if (part.type !== 'literal') parts[part.type] = Number(part.value);
  }
  return {
    year: parts['year'],
    month: parts['month'],
    day: parts['day'],
    hour: parts['hour'],
    minute: parts['minute'],
    second: parts['second'],
  };
}

function wallClockAsUtcMs(clock: WallClock): number {
  return Date.UTC(clock.year, clock.month - 1, clock.day, clock.hour, clock.minute, clock.second);
}

/**
 * Minutes the zone's wall clock is ahead of UTC at `instant` (east positive: Oslo in winter is 60).
 * Throws a RangeError for a name that is not an IANA zone.
 */
export function utcOffsetMinutes(instant: Date, timeZone: string): number {
  const instantMs = Math.floor(instant.getTime() / 1000) * 1000;
  return Math.round((wallClockAsUtcMs(wallClockAt(instantMs, timeZone)) - instantMs) / MINUTE_MS);
}

/** `+01:00`, `-04:00`, `+05:30`: the ISO 8601 form of an offset in minutes. */
export function formatUtcOffset(offsetMinutes: number): string {
  const sign = offsetMinutes < 0 ? '-' : '+';
  const absolute = Math.abs(offsetMinutes);
  return `${sign}${pad(Math.floor(absolute / 60))}:${pad(absolute % 60)}`;
}

/** What a site's wall-clock time means as an instant, or why it means none. */
export type ZonedInstant =
  | { readonly ok: true; readonly iso: string; readonly offset: string }
  | { readonly ok: false; readonly problem: 'malformed' | 'skipped' };

/**
 * Reads `2025-01-15T09:30` as the wall-clock time in `timeZone` and answers the ISO 8601 date-time
 * with that zone's offset, e.g. `2025-01-15T09:30:00+01:00` for Europe/Oslo.
 *
 * A time the clocks skipped (spring forward) is `skipped`, not silently moved. A time the clocks
 * showed twice (fall back) is read as the first of the two, as most calendar software does.
 */
export function zonedLocalToInstant(localDateTime: string, timeZone: string): ZonedInstant {
  const match = LOCAL_DATE_TIME.exec(localDateTime.trim());
  if (!match) return { ok: false, problem: 'malformed' };
  const [year, month, day, hour, minute, second] = match.slice(1).map((part) => Number(part ?? 0));
  const asUtcMs = Date.UTC(year, month - 1, day, hour, minute, second);
  const sameClock = new Date(asUtcMs);
  if (sameClock.getUTCMonth() !== month - 1 || sameClock.getUTCDate() !== day || hour > 23 || minute > 59) {
    return { ok: false, problem: 'malformed' };
  }
  // The offset at that wall-clock time is one of the offsets in force a day either side of it.
  const candidates = new Set([
    utcOffsetMinutes(new Date(asUtcMs - 24 * 60 * MINUTE_MS), timeZone),
    utcOffsetMinutes(new Date(asUtcMs + 24 * 60 * MINUTE_MS), timeZone),
  ]);
  const matching = [...candidates]
    .filter((offset) => utcOffsetMinutes(new Date(asUtcMs - offset * MINUTE_MS), timeZone) === offset)
    // The larger offset gives the earlier instant: the first pass through a repeated hour.
    .sort((a, b) => b - a);
  if (matching.length === 0) return { ok: false, problem: 'skipped' };
  const offset = formatUtcOffset(matching[0]);
  const iso = `${year}-${pad(month)}-${pad(day)}T${pad(hour)}:${pad(minute)}:${pad(second)}${offset}`;
  return { ok: true, iso, offset };
}

/** The wall-clock time in `timeZone` at `instant`, as a `datetime-local` input value (minutes). */
export function instantToZonedLocal(instant: Date, timeZone: string): string {
  const clock = wallClockAt(instant.getTime(), timeZone);
  return `${clock.year}-${pad(clock.month)}-${pad(clock.day)}T${pad(clock.hour)}:${pad(clock.minute)}`;
}

const displayFormats = new Map<string, Intl.DateTimeFormat>();

/**
 * A date-time for people, on the site's clock with the zone's short name:
 * `15 Jan 2025, 09:30 CET` (en-GB). Empty for an unreadable date.
 */
export function formatInZone(iso: string, timeZone: string, locale?: string): string {
  const instant = new Date(iso);
  if (Number.isNaN(instant.getTime())) return '';
  const key = `${locale ?? ''}|${timeZone}`;
  let format = displayFormats.get(key);
  if (!format) {
    format = new Intl.DateTimeFormat(locale, {
      timeZone,
      year: 'numeric',
      month: 'short',
      day: 'numeric',
      hour: '2-digit',
      minute: '2-digit',
      timeZoneName: 'short',
    });
    displayFormats.set(key, format);
  }
  return format.format(instant);
}

function pad(value: number): string {
  return String(value).padStart(2, '0');
}

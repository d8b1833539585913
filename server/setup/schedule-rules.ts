/**
 * Rules of a visit schedule, with no I/O: visit windows must not overlap, codes must be unique,
 * and an edited schedule is matched to the stored one by code so unchanged visits keep their ids.
 */

/** A visit with its window in days around the planned day. */
export interface ScheduledVisit {
  readonly code: string;
  readonly name: string;
  readonly dayOffset: number;
  readonly windowBeforeDays: number;
  readonly windowAfterDays: number;
}

/** First and last study day (inclusive) on which a visit may take place. */
export interface VisitWindow {
  readonly fromDay: number;
  readonly toDay: number;
}

/** Two visits whose windows share at least one day. */
export interface WindowOverlap {
  readonly first: ScheduledVisit & VisitWindow;
  readonly second: ScheduledVisit & VisitWindow;
  /** The shared days, inclusive. */
  readonly fromDay: number;
  readonly toDay: number;
}

/** A code used more than once in one list (compared without regard to case). */
export interface DuplicateCode {
  readonly code: string;
  /** 1-based positions in the list, as the admin sees the rows. */
  readonly rows: readonly number[];
}

export function visitWindow(visit: ScheduledVisit): VisitWindow {
  return { fromDay: visit.dayOffset - visit.windowBeforeDays, toDay: visit.dayOffset + visit.windowAfterDays };
}

/**
 * Every pair of visits whose windows share a day. A session dated on a shared day could belong to
 * either visit, so windows that merely touch (one ends on the day the next begins) overlap too.
 * Common practice: a protocol's visit windows partition the calendar. Each pair and the list are
 * in the order of the planned days, as people read a schedule.
 */
export function findWindowOverlaps(visits: readonly ScheduledVisit[]): WindowOverlap[] {
  const byPlannedDay = (a: ScheduledVisit & VisitWindow, b: ScheduledVisit & VisitWindow) =>
    a.dayOffset - b.dayOffset || a.fromDay - b.fromDay;
  const windowed = visits
    .map((visit) => ({ ...visit, ...visitWindow(visit) }))
    .sort((a, b) => a.fromDay - b.fromDay || a.toDay - b.toDay);
  const overlaps: WindowOverlap[] = [];
  for (let i = 0; i < windowed.length; i++) {
    // Sorted by first day: once a window starts after this one ends, so do all later ones.
    for (let j = i + 1; j < windowed.length && windowed[j].fromDay <= windowed[i].toDay; j++) {
      const [first, second] = [windowed[i], windowed[j]].sort(byPlannedDay);
      const fromDay = Math.max(first.fromDay, second.fromDay);
      const toDay = Math.min(first.toDay, second.toDay);
      overlaps.push({ first, second, fromDay, toDay });
    }
  }
  return overlaps.sort((a, b) => byPlannedDay(a.first, b.first) || byPlannedDay(a.second, b.second));
}

/** Codes that appear more than once, case ignored (V1 and v1 would confuse every listing). */
export function findDuplicateCodes(codes: readonly string[]): DuplicateCode[] {
  const rowsByCode = new Map<string, { code: string; rows: number[] }>();
  codes.forEach((code, index) => {
    const key = code.toUpperCase();
    const entry = rowsByCode.get(key) ?? { code, rows: [] };
    entry.rows.push(index + 1);
    rowsByCode.set(key, entry);
  });
  return [...rowsByCode.values()].filter((entry) => entry.rows.length > 1);
}

function days(fromDay: number, toDay: number): string {
  return fromDay === toDay ? `day ${fromDay}` : `days ${fromDay} to ${toDay}`;
}

/** The overlap in words: both visits with their windows, and the shared days. */
export function describeOverlap(overlap: WindowOverlap): string {
  const { first, second } = overlap;
  return (
    `Visits ${first.code} (${first.name}, ${days(first.fromDay, first.toDay)}) and ` +
    `${second.code} (${second.name}, ${days(second.fromDay, second.toDay)}) overlap on ${days(overlap.fromDay, overlap.toDay)}`
  );
}

export function describeDuplicate(list: 'visit' | 'timepoint', duplicate: DuplicateCode): string {
  return `The ${list} code ${duplicate.code} is used in rows ${duplicate.rows.join(' and ')}`;
}

/** How an edited list of coded items maps onto the stored one. */
export interface CodedListChange<Stored, Proposed> {
  /** Same code as a stored item: the stored id is kept, its fields updated. */
  readonly kept: readonly { stored: Stored; proposed: Proposed; ordinal: number }[];
  readonly added: readonly { proposed: Proposed; ordinal: number }[];
  readonly removed: readonly Stored[];
}

/** Matches proposed items to stored ones by exact code; the ordinal is the position in the proposed list. */
export function planCodedListChange<Stored extends { code: string }, Proposed extends { code: string }>(
  stored: readonly Stored[],
  proposed: readonly Proposed[],
): CodedListChange<Stored, Proposed> {
  const storedByCode = new Map(stored.map((item) => [item.code, item]));
  const proposedCodes = new Set(proposed.map((item) => item.code));
  const kept: { stored: Stored; proposed: Proposed; ordinal: number }[] = [];
  const added: { proposed: Proposed; ordinal: number }[] = [];
  proposed.forEach((item, ordinal) => {
    const match = storedByCode.get(item.code);
    if (match) kept.push({ stored: match, proposed: item, ordinal });
    else added.push({ proposed: item, ordinal });
  });
  return { kept, added, removed: stored.filter((item) => !proposedCodes.has(item.code)) };
}

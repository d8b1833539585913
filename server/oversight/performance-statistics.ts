/**
 * Summary statistics for the performance dashboards. Pure: no I/O, no clock.
 */

/** The middle value; the mean of the two middle values for an even count; null without values. */
export function median(values: readonly number[]): number | null {
  if (values.length === 0) return null;
  const sorted = [...values].sort((a, b) => a - b);
  const middle = Math.floor(sorted.length / 2);
  return sorted.length % 2 === 1 ? sorted[middle] : (sorted[middle - 1] + sorted[middle]) / 2;
}

/**
 * The p-th percentile (0 < p <= 100) by the nearest-rank method: the smallest value with at
 * least p % of the values at or below it, i.e. the ceil(p/100 * n)-th smallest. Always one of
 * the values, so "p90 turnaround 50 h" means a session really took 50 h. Hyndman & Fan 1996,
 * "Sample quantiles in statistical packages", Am Stat 50:361-365, definition 1 (inverse of the
 * empirical distribution function). Null without values.
 */
export function nearestRankPercentile(values: readonly number[], p: number): number | null {
  if (values.length === 0) return null;
  if (!(p > 0 && p <= 100)) throw new RangeError(`A percentile is above 0 and at most 100, not ${p}`);
  const sorted = [...values].sort((a, b) => a - b);
  return sorted[Math.ceil((p / 100) * sorted.length) - 1];
}

/** part / whole as a percentage; null when whole is 0. */
export function percent(part: number, whole: number): number | null {
  return whole === 0 ? null : (100 * part) / whole;
}

const MS_PER_HOUR = 3_600_000;
const MS_PER_DAY = 86_400_000;

/** Hours from one ISO instant to another. */
export function hoursBetween(fromIso: string, toIso: string): number {
  return (Date.parse(toIso) - Date.parse(fromIso)) / MS_PER_HOUR;
}

/** Days from one ISO instant to another. */
export function daysBetween(fromIso: string, toIso: string): number {
  return (Date.parse(toIso) - Date.parse(fromIso)) / MS_PER_DAY;
}

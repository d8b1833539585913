/** Helpers for the site form's country and time-zone fields; the server checks both again with its own ICU data. */

/** Time zones the browser knows, for suggestions. */
const BROWSER_TIME_ZONES: readonly string[] = Intl.supportedValuesOf('timeZone');
const REGION_NAMES = new Intl.DisplayNames(['en'], { type: 'region', fallback: 'code' });
const MAX_SUGGESTIONS = 12;

/** The English name of a two-letter country code, or '' while it is not one. */
export function countryNameOf(code: string): string {
  const upper = code.trim().toUpperCase();
  if (!/^[A-Z]{2}$/.test(upper)) return '';
  const name = REGION_NAMES.of(upper);
  return name && name !== upper && name !== 'Unknown Region' ? name : '';
}

/** Up to twelve zones containing every typed word, case ignored (`europe osl` finds Europe/Oslo). */
export function matchingTimeZones(typed: string, zones: readonly string[] = BROWSER_TIME_ZONES): string[] {
  const words = typed.toLowerCase().split(/[\s/_]+/).filter(Boolean);
  return zones.filter((zone) => words.every((word) => zone.toLowerCase().includes(word))).slice(0, MAX_SUGGESTIONS);
}

/**
 * Old and new audited values side by side: each value split into lines (one per field of an
 * object, formatted JSON), each line marked when it differs from the other side. Pure: no Angular.
 */

/** One line of a shown value. */
export interface ValueLine {
  /** The field name; null for a value that is not an object (shown whole). */
  readonly field: string | null;
  /** The field's value as indented JSON; a bare text value as it is. */
  readonly text: string;
  /** Whether this field is absent from, or different in, the other side. */
  readonly changed: boolean;
}

/** The lines of `value`, each marked against `other`. A null or absent value has no lines. */
export function valueLines(value: unknown, other: unknown): ValueLine[] {
  if (value === null || value === undefined) return [];
  // A bare text is shown as it is; inside an object, values are JSON (quotes tell "null" from null).
  if (!isRecord(value)) {
    const text = typeof value === 'string' ? value : json(value);
    return [{ field: null, text, changed: canonical(value) !== canonical(other) }];
  }
  const otherFields = isRecord(other) ? other : null;
  return Object.entries(value).map(([field, fieldValue]) => ({
    field,
    text: json(fieldValue),
    changed: !otherFields || !(field in otherFields) || canonical(fieldValue) !== canonical(otherFields[field]),
  }));
}

/** The fields that differ between old and new (added, removed or changed), in the order first seen. */
export function changedFields(oldValue: unknown, newValue: unknown): string[] {
  if (!isRecord(oldValue) || !isRecord(newValue)) return [];
  const fields = [...new Set([...Object.keys(oldValue), ...Object.keys(newValue)])];
  return fields.filter((field) => !(field in oldValue) || !(field in newValue) || canonical(oldValue[field]) !== canonical(newValue[field]));
}

function isRecord(value: unknown): value is Record<string, unknown> {
  return typeof value === 'object' && value !== null && !Array.isArray(value);
}

function json(value: unknown): string {
  return JSON.stringify(value, null, 2) ?? String(value);
}

/** JSON with object keys sorted, so that key order alone never counts as a change. */
function canonical(value: unknown): string {
  return JSON.stringify(value, (_key, inner: unknown) =>
    isRecord(inner) ? Object.fromEntries(Object.keys(inner).sort().map((key) => [key, inner[key]])) : inner,
  ) ?? 'undefined';
}

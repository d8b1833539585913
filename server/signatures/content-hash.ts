import { createHash } from 'node:crypto';

/**
 * The record content in canonical JSON: object keys sorted at every depth, array order kept,
 * `undefined` members left out (as JSON.stringify does). The same content always gives the same
 * text, whatever order its keys were built in, so a signature survives a reload from the database.
 */
export function canonicalJson(content: unknown): string {
  return JSON.stringify(canonical(content)) ?? 'null';
}

function canonical(value: unknown): unknown {
  if (value === null || typeof value !== 'object') return value;
  const plain = typeof (value as { toJSON?: unknown }).toJSON === 'function' ? (value as { toJSON(): unknown }).toJSON() : value;
  if (plain === null || typeof plain !== 'object') return plain;
  if (Array.isArray(plain)) return plain.map((item) => (item === undefined ? null : canonical(item)));
  const sorted: Record<string, unknown> = {};
  for (const key of Object.keys(plain).sort()) {
    const member = (plain as Record<string, unknown>)[key];
    if (member !== undefined && typeof member !== 'function') sorted[key] = canonical(member);
  }
  return sorted;
}

/** SHA-256 (hex) of the canonical JSON of a signed record's content. */
export function contentHash(content: unknown): string {
  return createHash('sha256').update(canonicalJson(content), 'utf8').digest('hex');
}

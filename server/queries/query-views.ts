import type { Query } from '../../shared/contracts/reading.js';
import type { QueryMessageRow, QueryWithCodes } from './query-repository.js';

/**
 * Who looks at a query: the reader works blinded (no session, subject, site or names); the site
 * sees its own session but never the reader's name; data managers and monitors see everything.
 */
export type QueryAudience = 'reader' | 'site' | 'study';

const ROLE_LABELS: Readonly<Record<string, string>> = {
  'site-coordinator': 'Site',
  'over-reader': 'Over-reader',
  adjudicator: 'Over-reader',
  'data-manager': 'Data manager',
};

/** How an author is named to an audience: by role, with the name only for the study team. */
export function authorLabel(
  role: string,
  audience: QueryAudience,
  name: string | undefined,
  siteNumber: string,
): string {
  const label = ROLE_LABELS[role] ?? 'Study team';
  if (audience !== 'study') return label;
  const who = role === 'site-coordinator' ? `Site ${siteNumber}` : label;
  return name ? `${who} (${name})` : who;
}

/** A stored query as one audience may see it. */
export function toQueryView(
  record: QueryWithCodes,
  messages: readonly QueryMessageRow[],
  audience: QueryAudience,
  names: ReadonlyMap<string, string>,
): Query {
  const { query } = record;
  const label = (role: string, userId: string) => authorLabel(role, audience, names.get(userId), record.siteNumber);
  const identified = audience !== 'reader';
  return {
    id: query.id,
    status: query.status,
    question: query.question,
    requestRepeat: query.requestRepeat,
    openedByLabel: label(query.openedRole, query.openedBy),
    openedAt: query.openedAt,
    closedAt: query.closedAt,
    messages: messages.map((message) => ({
      id: message.id,
      authorLabel: label(message.authorRole, message.authorId),
      body: identified ? message.body : redactIdentity(message.body, record),
      createdAt: message.createdAt,
    })),
    sessionId: identified ? query.sessionId : null,
    subjectCode: identified ? record.subjectCode : null,
    siteNumber: identified ? record.siteNumber : null,
  };
}

/**
 * A site's free text as a reader may read it: the session's subject code, site name and technician
 * code replaced by placeholders, so that an answer cannot unblind the reader by accident.
 */
export function redactIdentity(text: string, record: Pick<QueryWithCodes, 'subjectCode' | 'siteName' | 'technicianCode'>): string {
  const replacements: [string, string][] = [
    [record.subjectCode, '[subject]'],
    [record.siteName, '[site]'],
    [record.technicianCode, '[technician]'],
  ];
  return replacements
    .filter(([value]) => value.trim().length > 0)
    .reduce((redacted, [value, placeholder]) => redacted.split(value).join(placeholder), text);
}

/** "Subject 101-003, visit V3, timepoint PRE-DOSE, pre-bronchodilator": for people who may know it. */
export function describeQuerySession(record: QueryWithCodes): string {
  return `Subject ${record.subjectCode}, visit ${record.visitCode}, timepoint ${record.timepointCode}, ${record.bronchodilator}-bronchodilator`;
}

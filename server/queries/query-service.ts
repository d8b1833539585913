import { randomUUID } from 'node:crypto';
import type { Query } from '../../shared/contracts/reading.js';
import type { AuditActor, AuditTrail } from '../audit/audit-trail.js';
import { AppError } from '../http/app-error.js';
import { siteInScope, type SiteScope } from '../http/access.js';
import type { MessageService } from '../messages/message-service.js';
import type { SessionRepository, SessionRow } from '../sessions/session-repository.js';
import type { SessionService } from '../sessions/session-service.js';
import type { LockScopeRef, QueryRepository, QueryStatus, QueryWithCodes } from './query-repository.js';
import { describeQuerySession, toQueryView, type QueryAudience } from './query-views.js';
import type { SiteContactRepository } from './site-contact-repository.js';

export type { LockScopeRef } from './query-repository.js';

/** A new query: the question, and whether the site is asked to repeat the test. */
export interface NewQuery {
  readonly question: string;
  readonly requestRepeat: boolean;
}

/**
 * Who writes on an existing query from the study side: a data manager (any query of the study)
 * or an over-reader (only queries opened from their own read, and always blinded).
 */
export interface QueryCaller {
  readonly actor: AuditActor;
  readonly dataManager: boolean;
}

/** Roles that open queries from a read; the site knows them only as "the central over-reader". */
const READER_ROLES = new Set(['over-reader', 'adjudicator']);

/** Where a reader is sent by e-mail: their read in the reading room (the read id carries no session identity). */
const readerLink = (studyId: string, readId: string) => `/reading/reads/${studyId}/${readId}`;
const DATA_OFFICE_LINK = '/data-office/queries';

/**
 * Queries to sites about sessions: open → answered (the site wrote) → closed (by the opener's side
 * or a data manager); a new message from the opener's side reopens the query. Every change is
 * audited as entity `query`, and each step is e-mailed to the people who act next.
 */
export class QueryService {
  constructor(
    private readonly queries: QueryRepository,
    private readonly contacts: SiteContactRepository,
    private readonly sessions: SessionRepository,
    private readonly sessionService: SessionService,
    private readonly audit: AuditTrail,
    private readonly messages: MessageService,
    private readonly clock: () => Date,
  ) {}

  /** A reader opens a query from their own read; the answer they get back is blinded. */
  openOnRead(actor: AuditActor, studyId: string, readId: string, input: NewQuery): Query {
    const read = this.requireOwnRead(studyId, readId, actor.userId);
    if (read.status === 'withdrawn') {
      throw AppError.conflict('This read was released back to the queue; open a query from a read you hold.', undefined, 'read-withdrawn');
    }
    const session = this.sessions.findSessionById(read.sessionId)!;
    this.assertWritable(session, 'reader');
    return this.create(actor, session, readId, input, 'reader');
  }

  /** A data manager opens a query on a session. */
  openOnSession(actor: AuditActor, studyId: string, sessionId: string, scope: SiteScope, input: NewQuery): Query {
    const session = this.sessionService.requireSession(studyId, sessionId, scope);
    this.assertWritable(session, 'study');
    return this.create(actor, session, null, input, 'study');
  }

  /** Queries opened from one of the caller's reads, blinded. */
  ofRead(studyId: string, readId: string, readerId: string): Query[] {
    this.requireOwnRead(studyId, readId, readerId);
    return this.views(this.queries.ofRead(studyId, readId), 'reader');
  }

  /** Queries on one session, for its site or the study team. */
  ofSession(studyId: string, sessionId: string, scope: SiteScope, audience: QueryAudience): Query[] {
    this.sessionService.requireSession(studyId, sessionId, scope);
    return this.views(this.queries.ofSession(studyId, sessionId), audience);
  }

  /** Queries of the study inside the caller's sites, newest first, optionally of one status. */
  list(studyId: string, scope: SiteScope, status: QueryStatus | undefined, audience: QueryAudience): Query[] {
    return this.views(this.queries.ofStudy(studyId, scope.allSites ? undefined : scope.siteIds, status), audience);
  }

  /** The site answers: the query becomes `answered` and its opener is told. */
  answer(actor: AuditActor, studyId: string, queryId: string, scope: SiteScope, body: string): Query {
    const record = this.queries.findQuery(studyId, queryId);
    if (!record || !siteInScope(scope, record.query.siteId)) throw AppError.notFound('There is no such query in this study.');
    this.assertWritable(this.sessions.findSessionById(record.query.sessionId)!, 'site');
    assertNotClosed(record);
    this.addMessage(actor, record, body, 'answered', 'answer');
    this.tellOpenerOfAnswer(record, body);
    return this.viewOf(queryId, studyId, 'site');
  }

  /** The opener's side writes again: the query is open again and the site is told. */
  followUp(caller: QueryCaller, studyId: string, queryId: string, body: string): Query {
    const { record, audience } = this.requireWritableBy(caller, studyId, queryId);
    this.assertWritable(this.sessions.findSessionById(record.query.sessionId)!, audience);
    this.addMessage(caller.actor, record, body, 'open', 'follow-up');
    this.tellSite(record, {
      subject: `Query reopened: ${describeQuerySession(record)}`,
      body:
        `${openerWords(record)} wrote again on the query about ${describeQuerySession(record)}:\n\n"${body}"\n\n` +
        'The query is open again: answer it in the site desk.',
    });
    return this.viewOf(queryId, studyId, audience);
  }

  /** Closes a query (the opener's side or a data manager); the site is told. Allowed on locked data: it changes no session data. */
  close(caller: QueryCaller, studyId: string, queryId: string): Query {
    const { record, audience } = this.requireWritableBy(caller, studyId, queryId);
    assertNotClosed(record);
    const now = this.clock().toISOString();
    this.audit.write(caller.actor, (recordChange) => {
      this.queries.updateQuery(queryId, { status: 'closed', closedAt: now, closedBy: caller.actor.userId });
      recordChange({
        studyId,
        siteId: record.query.siteId,
        entity: 'query',
        entityId: queryId,
        action: 'close',
        oldValue: { status: record.query.status },
        newValue: { status: 'closed', closedAt: now },
      });
    });
    this.tellSite(record, {
      subject: `Query closed: ${describeQuerySession(record)}`,
      body: `The query about ${describeQuerySession(record)} is closed; nothing more is needed from your site for it.\n\nQuestion: "${record.query.question}"`,
    });
    return this.viewOf(queryId, studyId, audience);
  }

  /** Whether any query inside a lock's scope is still open or answered (not closed): such data cannot be locked. */
  hasOpenQueries(scope: LockScopeRef): boolean {
    return this.queries.countUnclosed(scope) > 0;
  }

  /** How many queries inside a lock's scope are open or answered. */
  openQueryCount(scope: LockScopeRef): number {
    return this.queries.countUnclosed(scope);
  }

  private create(actor: AuditActor, session: SessionRow, readId: string | null, input: NewQuery, audience: QueryAudience): Query {
    const id = randomUUID();
    const now = this.clock().toISOString();
    this.audit.write(actor, (record) => {
      this.queries.insertQuery({
        id,
        studyId: session.studyId,
        siteId: session.siteId,
        sessionId: session.id,
        readId,
        openedBy: actor.userId,
        openedRole: actor.role,
        question: input.question,
        requestRepeat: input.requestRepeat,
        status: 'open',
        openedAt: now,
        closedAt: null,
        closedBy: null,
      });
      record({
        studyId: session.studyId,
        siteId: session.siteId,
        entity: 'query',
        entityId: id,
        action: 'open',
        newValue: { sessionId: session.id, readId, question: input.question, requestRepeat: input.requestRepeat, status: 'open' },
      });
    });
    const created = this.queries.findQuery(session.studyId, id)!;
    const repeat = input.requestRepeat
      ? '\n\nRepeat the test requested: please repeat the test within the visit window, then upload the new file.'
      : '';
    this.tellSite(created, {
      subject: `${input.requestRepeat ? 'Repeat the test requested' : 'New query'}: ${describeQuerySession(created)}`,
      body: `${openerWords(created)} has a question about ${describeQuerySession(created)}:\n\n"${input.question}"${repeat}\n\nAnswer it in the site desk.`,
    });
    return this.viewOf(id, session.studyId, audience);
  }

  private addMessage(actor: AuditActor, record: QueryWithCodes, body: string, status: QueryStatus, action: string): void {
    const id = randomUUID();
    const now = this.clock().toISOString();
    const { query } = record;
    this.audit.write(actor, (recordChange) => {
      this.queries.insertMessage({ id, queryId: query.id, authorId: actor.userId, authorRole: actor.role, body, createdAt: now });
      const changes = status === 'open' ? { status, closedAt: null, closedBy: null } : { status };
      this.queries.updateQuery(query.id, changes);
      recordChange({
        studyId: query.studyId,
        siteId: query.siteId,
        entity: 'query',
        entityId: query.id,
        action,
        oldValue: { status: query.status },
        newValue: { status, messageId: id, body },
      });
    });
  }

  private tellOpenerOfAnswer(record: QueryWithCodes, answer: string): void {
    const { query } = record;
    if (query.readId) {
      // The reader is told only the blinded read code: no site, subject or answer text in their mailbox.
      const blindCode = this.queries.findRead(query.studyId, query.readId)?.blindCode ?? 'of yours';
      this.messages.notify(query.openedBy, {
        subject: `Your query on read ${blindCode} was answered`,
        body: `The site answered your query on read ${blindCode}. Read the answer with the read in the reading room, then close the query or write again.`,
        link: readerLink(query.studyId, query.readId),
      });
      return;
    }
    this.messages.notify(query.openedBy, {
      subject: `Query answered by site ${record.siteNumber}: ${describeQuerySession(record)}`,
      body: `Site ${record.siteNumber} answered your query about ${describeQuerySession(record)}:\n\n"${answer}"\n\nClose the query, or write again to reopen it.`,
      link: DATA_OFFICE_LINK,
    });
  }

  private tellSite(record: QueryWithCodes, notice: { subject: string; body: string }): void {
    const link = `/site-desk/sessions/${record.query.studyId}/${record.query.sessionId}`;
    for (const userId of this.contacts.coordinatorIdsOf(record.query.studyId, record.query.siteId)) {
      this.messages.notify(userId, { ...notice, link });
    }
  }

  /** A read of the caller's in this study; 404 for anyone else's, with no hint that it exists. */
  private requireOwnRead(studyId: string, readId: string, readerId: string) {
    const read = this.queries.findRead(studyId, readId);
    if (!read || read.readerId !== readerId) throw AppError.notFound('There is no such read of yours in this study.');
    return read;
  }

  /** The query, if the caller may write on it, and the view they get back. */
  private requireWritableBy(caller: QueryCaller, studyId: string, queryId: string): { record: QueryWithCodes; audience: QueryAudience } {
    const record = this.queries.findQuery(studyId, queryId);
    if (record && caller.dataManager) return { record, audience: 'study' };
    const readId = record?.query.readId;
    const read = readId ? this.queries.findRead(studyId, readId) : undefined;
    if (!record || !read || read.readerId !== caller.actor.userId || !READER_ROLES.has(record.query.openedRole)) {
      throw AppError.notFound('There is no such query on your reads in this study.');
    }
    return { record, audience: 'reader' };
  }

  /** Refuses a change on locked data; readers get the refusal without the session's identity. */
  private assertWritable(session: SessionRow, audience: QueryAudience): void {
    if (audience !== 'reader') {
      this.sessionService.assertWritable(session);
      return;
    }
    const lock = this.sessions.activeLockOn(session);
    if (lock) {
      throw AppError.conflict(
        `The data of this session is locked (${lock.scope} lock since ${lock.lockedAt}); nothing was changed.`,
        { scope: lock.scope, lockedAt: lock.lockedAt },
        'locked',
      );
    }
  }

  private viewOf(queryId: string, studyId: string, audience: QueryAudience): Query {
    return this.views([this.queries.findQuery(studyId, queryId)!], audience)[0];
  }

  private views(records: readonly QueryWithCodes[], audience: QueryAudience): Query[] {
    const messages = this.queries.messagesOf(records.map((record) => record.query.id));
    const names =
      audience === 'study'
        ? this.queries.namesOf([...records.map((record) => record.query.openedBy), ...messages.map((message) => message.authorId)])
        : new Map<string, string>();
    return records.map((record) =>
      toQueryView(
        record,
        messages.filter((message) => message.queryId === record.query.id),
        audience,
        names,
      ),
    );
  }
}

function assertNotClosed(record: QueryWithCodes): void {
  if (record.query.status === 'closed') {
    throw AppError.conflict(
      `This query was closed at ${record.query.closedAt}; nothing was changed. The study team reopens it by writing again if more is needed.`,
      undefined,
      'query-closed',
    );
  }
}

/** Who asks, in the site's words: never the reader's name. */
function openerWords(record: QueryWithCodes): string {
  return READER_ROLES.has(record.query.openedRole) ? 'The central over-reader' : 'The data manager';
}

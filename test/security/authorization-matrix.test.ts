/**
 * The authorization matrix: every route of the OpenAPI document against every kind of caller,
 * on the real app with the demo study. The expected outcome of each pair comes from the table
 * below, written independently of the route files: a route whose access rule changes, or a route
 * added without a row here, fails this test. The matrix is printed once at the end (for the README).
 *
 * Outcome classes: A allowed (2xx, 3xx, or a 4xx from validation or the handler other than 401/403),
 * D denied (403), U unauthenticated (401), H hidden (404: a resource of a site outside the caller's
 * sites is answered as if it did not exist, so its existence is not disclosed).
 *
 * Writes never change the demo: allowed callers send a body the route's schema refuses (400 proves
 * that access was granted, since validation runs after the access check in server/http/api-route.ts),
 * except where a row says otherwise and names why.
 */
import { randomUUID } from 'node:crypto';
import { afterAll, beforeAll, describe, expect, it } from '@jest/globals';
import { CSRF_HEADER, type Role } from '../../shared/contracts/auth.js';
import type { QueuePage, ReadWorkspace } from '../../shared/contracts/reading.js';
import { effortToCsv, generateSession } from '../../shared/spirometry/synthetic/curve-generator.js';
import { DEMO_STUDY } from '../../server/seed/demo-study.js';
import { signIn, startTidemarkForTest, type CookieClient } from '../support/tidemark-under-test.js';

type Running = Awaited<ReturnType<typeof startTidemarkForTest>>;
type Outcome = 'A' | 'D' | 'U' | 'H';

/** Who may call a route, as this test expects it. */
type Expectation =
  | { readonly kind: 'public' }
  | { readonly kind: 'signed-in' }
  /** Open to any signed-in caller at the access layer; the handler then wants the study-admin role in some study. */
  | { readonly kind: 'admin-of-any-study' }
  /**
   * Roles in the study of the path. `site: 'named'`: a site named in the request (`:siteId` or
   * `?siteId=`) outside a site coordinator's sites is refused (403); `site: 'resource'`: a session,
   * file or query of another site answers 404.
   */
  | { readonly kind: 'study'; readonly roles: readonly Role[]; readonly site?: 'named' | 'resource' };

const PUBLIC: Expectation = { kind: 'public' };
const SIGNED_IN: Expectation = { kind: 'signed-in' };
const study = (roles: readonly Role[], site?: 'named' | 'resource'): Expectation => ({ kind: 'study', roles, site });

const ADMIN: readonly Role[] = ['study-admin'];
const COORDINATOR: readonly Role[] = ['site-coordinator'];
const DATA_MANAGER: readonly Role[] = ['data-manager'];
const READERS: readonly Role[] = ['over-reader', 'adjudicator'];
/** Oversight: admin, data manager, monitor. */
const OVERSIGHT: readonly Role[] = ['study-admin', 'data-manager', 'monitor'];
/** Who sees sessions with their site and subject: the site and the study team (readers work blinded). */
const SESSION_VIEWERS: readonly Role[] = ['site-coordinator', 'study-admin', 'data-manager', 'monitor'];
/** The site and the people who talk to it; the admin is not part of query and feedback traffic. */
const SITE_CORRESPONDENTS: readonly Role[] = ['site-coordinator', 'data-manager', 'monitor'];
const EVERY_ROLE: readonly Role[] = ['study-admin', 'site-coordinator', 'over-reader', 'adjudicator', 'data-manager', 'monitor'];

/** Expected access of every route, keyed `method path` as in the OpenAPI document. */
const EXPECTED: Readonly<Record<string, Expectation>> = {
  'get /auth/login': PUBLIC,
  'get /auth/reauthenticate': SIGNED_IN,
  'get /auth/callback': PUBLIC,
  'post /auth/logout': SIGNED_IN,
  'get /api/me': SIGNED_IN,
  'get /api/me/tokens': SIGNED_IN,
  'post /api/me/tokens': SIGNED_IN,
  'delete /api/me/tokens/{tokenId}': SIGNED_IN,
  'get /api/me/messages': SIGNED_IN,
  'get /api/health': PUBLIC,
  'get /api/openapi.json': PUBLIC,
  'get /api/formats/tidemark-session.schema.json': PUBLIC,
  'get /api/formats/finding-codes': PUBLIC,
  'get /api/protocols': SIGNED_IN,
  'get /api/protocols/compare': SIGNED_IN,
  'get /api/protocols/{id}/versions/{version}': SIGNED_IN,
  'get /api/reference-sets': SIGNED_IN,
  'post /api/reference-sets': { kind: 'admin-of-any-study' },
  'get /api/reference-sets/{referenceSetId}/validation': SIGNED_IN,
  'get /api/studies': SIGNED_IN,
  'post /api/studies': { kind: 'admin-of-any-study' },
  'get /api/studies/{studyId}': study(EVERY_ROLE),

  'get /api/studies/{studyId}/setup': study(OVERSIGHT),
  'put /api/studies/{studyId}/setup': study(ADMIN),
  'get /api/studies/{studyId}/schedule': study(EVERY_ROLE),
  'put /api/studies/{studyId}/schedule': study(ADMIN),
  'get /api/studies/{studyId}/sites': study(SESSION_VIEWERS),
  'post /api/studies/{studyId}/sites': study(ADMIN),
  'get /api/studies/{studyId}/sites/{siteId}': study(SESSION_VIEWERS, 'named'),
  'put /api/studies/{studyId}/sites/{siteId}': study(ADMIN, 'named'),
  'delete /api/studies/{studyId}/sites/{siteId}': study(ADMIN, 'named'),
  'get /api/studies/{studyId}/people': study(OVERSIGHT),
  'post /api/studies/{studyId}/people': study(ADMIN),
  'delete /api/studies/{studyId}/people/{userId}/roles/{role}': study(ADMIN),
  'post /api/studies/{studyId}/people/{userId}/deactivate': study(ADMIN),
  'get /api/studies/{studyId}/reference-set': study(OVERSIGHT),
  'put /api/studies/{studyId}/reference-set': study(ADMIN),

  'get /api/studies/{studyId}/sites/{siteId}/subjects': study(SESSION_VIEWERS, 'named'),
  'post /api/studies/{studyId}/sites/{siteId}/subjects': study(['site-coordinator', 'study-admin'], 'named'),
  'post /api/studies/{studyId}/sites/{siteId}/sessions': study(COORDINATOR, 'named'),
  'get /api/studies/{studyId}/sites/{siteId}/calibration-checks': study(SESSION_VIEWERS, 'named'),
  'post /api/studies/{studyId}/sites/{siteId}/calibration-checks': study(COORDINATOR, 'named'),
  'get /api/studies/{studyId}/sessions': study(SESSION_VIEWERS, 'named'),
  'get /api/studies/{studyId}/sessions/{sessionId}': study(SESSION_VIEWERS, 'resource'),
  'patch /api/studies/{studyId}/sessions/{sessionId}': study(COORDINATOR, 'resource'),
  'post /api/studies/{studyId}/sessions/{sessionId}/uploads': study(COORDINATOR, 'resource'),
  'post /api/studies/{studyId}/sessions/{sessionId}/uploads/{uploadId}/reprocess': study(COORDINATOR, 'resource'),
  'get /api/studies/{studyId}/sessions/{sessionId}/uploads/{uploadId}/original': study(SESSION_VIEWERS, 'resource'),
  'get /api/studies/{studyId}/sessions/{sessionId}/curves': study(SESSION_VIEWERS, 'resource'),
  'get /api/studies/{studyId}/sessions/{sessionId}/feedback': study(SITE_CORRESPONDENTS, 'resource'),
  'get /api/studies/{studyId}/sessions/{sessionId}/feedback.pdf': study(SITE_CORRESPONDENTS, 'resource'),

  'post /api/studies/{studyId}/reads/{readId}/queries': study(READERS),
  'get /api/studies/{studyId}/reads/{readId}/queries': study(READERS),
  'post /api/studies/{studyId}/sessions/{sessionId}/queries': study(DATA_MANAGER),
  'get /api/studies/{studyId}/sessions/{sessionId}/queries': study(SITE_CORRESPONDENTS, 'resource'),
  'get /api/studies/{studyId}/queries': study(SITE_CORRESPONDENTS),
  'post /api/studies/{studyId}/queries/{queryId}/answers': study(COORDINATOR, 'resource'),
  'post /api/studies/{studyId}/queries/{queryId}/messages': study([...READERS, 'data-manager']),
  'post /api/studies/{studyId}/queries/{queryId}/close': study([...READERS, 'data-manager']),

  'get /api/studies/{studyId}/reading/queue': study(['over-reader']),
  'post /api/studies/{studyId}/reading/claims': study(['over-reader']),
  'get /api/studies/{studyId}/reads': study(READERS),
  'get /api/studies/{studyId}/reads/{readId}': study(READERS),
  'put /api/studies/{studyId}/reads/{readId}': study(READERS),
  'get /api/studies/{studyId}/reads/{readId}/curves': study(READERS),
  'post /api/studies/{studyId}/reads/{readId}/release': study(READERS),
  'post /api/studies/{studyId}/reads/{readId}/sign': study(READERS),
  'get /api/studies/{studyId}/adjudication/queue': study(['adjudicator']),
  'post /api/studies/{studyId}/adjudication/claims': study(['adjudicator']),
  'get /api/studies/{studyId}/adjudications/{readId}': study(['adjudicator']),
  'get /api/studies/{studyId}/reading/agreement': study(OVERSIGHT),

  'get /api/studies/{studyId}/audit': study(OVERSIGHT),
  'get /api/studies/{studyId}/audit/filter-options': study(OVERSIGHT),
  'post /api/studies/{studyId}/audit/verify': study(OVERSIGHT),
  'get /api/studies/{studyId}/performance/sites': study(OVERSIGHT),
  'get /api/studies/{studyId}/performance/readers': study(OVERSIGHT),
  'get /api/studies/{studyId}/performance/export.xlsx': study(OVERSIGHT),
  'post /api/studies/{studyId}/replays': study(['study-admin', 'data-manager']),
  'get /api/studies/{studyId}/replays/{replayId}.csv': study(['study-admin', 'data-manager']),
  'get /api/studies/{studyId}/replays/{replayId}': study(['study-admin', 'data-manager']),
  'get /api/studies/{studyId}/locks': study(OVERSIGHT),
  'post /api/studies/{studyId}/locks': study(DATA_MANAGER),
  'post /api/studies/{studyId}/locks/{lockId}/unlock': study(DATA_MANAGER),
  'post /api/studies/{studyId}/releases': study(DATA_MANAGER),
  'get /api/studies/{studyId}/releases': study(OVERSIGHT),
  'get /api/studies/{studyId}/releases/{releaseId}/progress': study(OVERSIGHT),
  'get /api/studies/{studyId}/releases/{releaseId}': study(OVERSIGHT),
  'get /api/studies/{studyId}/releases/{releaseId}/files/{fileName}': study(OVERSIGHT),
};

/** Routes whose every allowed caller must get 2xx/3xx: proof that the ids name real resources, so an H is a scope decision. */
const REACHABLE = new Set([
  'get /api/studies/{studyId}/sites/{siteId}',
  'get /api/studies/{studyId}/sites/{siteId}/subjects',
  'get /api/studies/{studyId}/sites/{siteId}/calibration-checks',
  'get /api/studies/{studyId}/sessions/{sessionId}',
  'get /api/studies/{studyId}/sessions/{sessionId}/uploads/{uploadId}/original',
  'get /api/studies/{studyId}/sessions/{sessionId}/curves',
  'get /api/studies/{studyId}/sessions/{sessionId}/feedback',
  'get /api/studies/{studyId}/sessions/{sessionId}/feedback.pdf',
  'get /api/studies/{studyId}/sessions/{sessionId}/queries',
  'get /api/studies/{studyId}/locks',
]);

/** Kinds of caller, each one column of the matrix. */
interface Caller {
  readonly column: string;
  readonly label: string;
  /** Roles in the demo study; undefined for an anonymous caller and a revoked token. */
  readonly demoRoles?: readonly Role[];
  /** Whether the caller is a study admin in some study. */
  readonly adminSomewhere?: boolean;
  /** A site coordinator whose sites exclude the site of the probed resources. */
  readonly otherSite?: boolean;
  readonly credential: 'none' | 'session' | 'revoked-token';
}

const CALLERS: readonly Caller[] = [
  { column: 'anon', label: 'anonymous', credential: 'none' },
  { column: 'admin', label: 'study admin', demoRoles: ['study-admin'], adminSomewhere: true, credential: 'session' },
  { column: 'reader', label: 'over-reader', demoRoles: ['over-reader'], credential: 'session' },
  { column: 'adjud', label: 'adjudicator (also an over-reader)', demoRoles: ['over-reader', 'adjudicator'], credential: 'session' },
  { column: 'dm', label: 'data manager', demoRoles: ['data-manager'], credential: 'session' },
  { column: 'mon', label: 'monitor', demoRoles: ['monitor'], credential: 'session' },
  { column: 'coord', label: 'site coordinator of the probed site', demoRoles: ['site-coordinator'], credential: 'session' },
  { column: 'c-oth', label: 'site coordinator of another site', demoRoles: ['site-coordinator'], otherSite: true, credential: 'session' },
  { column: 'o-std', label: 'monitor of another study only', demoRoles: [], credential: 'session' },
  { column: 'revkd', label: 'revoked API token (of the data manager)', credential: 'revoked-token' },
];

function expectedOutcome(expectation: Expectation, caller: Caller): Outcome {
  if (caller.credential === 'revoked-token') return 'U'; // a credential that is present but bad is refused before any route
  if (expectation.kind === 'public') return 'A';
  if (caller.credential === 'none') return 'U';
  if (expectation.kind === 'signed-in') return 'A';
  if (expectation.kind === 'admin-of-any-study') return caller.adminSomewhere ? 'A' : 'D';
  const held = (caller.demoRoles ?? []).filter((role) => expectation.roles.includes(role));
  if (held.length === 0) return 'D';
  if (caller.otherSite && held.every((role) => role === 'site-coordinator')) {
    if (expectation.site === 'named') return 'D';
    if (expectation.site === 'resource') return 'H';
  }
  return 'A';
}

function outcomeOf(status: number): Outcome | undefined {
  if (status === 401) return 'U';
  if (status === 403) return 'D';
  if (status >= 200 && status < 500) return 'A';
  return undefined;
}

/** What the test sends: path ids, query string and body per route. */
interface Probe {
  readonly method: string;
  readonly url: string;
  readonly body?: { json: unknown } | { form: () => FormData };
}

/** The ids the demo gives (or the set-up creates) for each path parameter. */
interface Fixtures {
  siteId: string;
  sessionId: string;
  uploadId: string;
  readId: string;
  readToRelease: string;
  queryId: string;
  queryToClose: string;
  lockId: string;
}

type OpenApiDocument = {
  paths: Record<string, Record<string, { requestBody?: { content: Record<string, unknown> } }>>;
};

/** The coordinator who sees each demo site. */
const COORDINATOR_OF_SITE: Record<string, string> = {
  'site-101': 'coordinator.101@tidemark.example',
  'site-102': 'coordinator.102@tidemark.example',
  'site-201': 'coordinator.201@tidemark.example',
  'site-301': 'coordinator.201@tidemark.example',
};
const OTHER_STUDY_EMAIL = 'other.study.monitor@tidemark.example';
/** A body every JSON schema of the API refuses (they are all objects), so nothing is written. */
const INVALID_BODY: unknown = [];

let tidemark: Running;
let documentPaths: OpenApiDocument['paths'];
let fixtures: Fixtures;
const clients = new Map<string, { client: CookieClient; csrfToken: string }>();
let revokedToken: string;
const results: { route: string; column: string; expected: Outcome; got: Outcome | undefined; status: number; message: string }[] = [];

const studyUrl = (rest = '') => `${tidemark.url}/api/studies/${DEMO_STUDY.id}${rest}`;

async function send(caller: { client: CookieClient; csrfToken: string }, method: string, url: string, body?: unknown): Promise<Response> {
  return caller.client.fetch(url, {
    method,
    headers: { 'content-type': 'application/json', [CSRF_HEADER]: caller.csrfToken },
    body: body === undefined ? undefined : JSON.stringify(body),
  });
}

async function json<T>(response: Response, expectedStatus: number, what: string): Promise<T> {
  const text = await response.text();
  if (response.status !== expectedStatus) throw new Error(`${what}: expected ${expectedStatus}, got ${response.status} ${text}`);
  return JSON.parse(text) as T;
}

beforeAll(async () => {
  tidemark = await startTidemarkForTest({ TIDEMARK_UPLOAD_RATE_PER_MINUTE: '100000' });
  documentPaths = ((await (await fetch(`${tidemark.url}/api/openapi.json`)).json()) as OpenApiDocument).paths;

  const reader = await signIn(tidemark.url, 'reader.one@tidemark.example');
  const admin = await signIn(tidemark.url, 'admin@tidemark.example');
  const dataManager = await signIn(tidemark.url, 'data.manager@tidemark.example');

  // A final read of a demo session (single-read study): the session then has its file, feedback and curves.
  const queue = await json<QueuePage>(await send(reader, 'GET', studyUrl('/reading/queue')), 200, 'reading queue');
  const read = await json<ReadWorkspace>(
    await send(reader, 'POST', studyUrl('/reading/claims'), { queueToken: queue.items[0].queueToken }),
    201,
    'claim',
  );
  const saved = await json<ReadWorkspace>(
    await send(reader, 'PUT', studyUrl(`/reads/${read.readId}`), {
      version: read.version,
      verdicts: read.efforts.map((effort) => ({
        effortIndex: effort.index,
        fev1Verdict: effort.suggestedFev1Verdict,
        fvcVerdict: effort.suggestedFvcVerdict,
        findings: effort.findings.map((finding) => finding.code),
        comment: '',
      })),
      feedbackText: 'Matrix fixture.',
    }),
    200,
    'save read',
  );
  await json(await send(reader, 'POST', studyUrl(`/reads/${read.readId}/sign`), { version: saved.version, meaning: 'authored' }), 200, 'sign read');
  const readToRelease = await json<ReadWorkspace>(
    await send(reader, 'POST', studyUrl('/reading/claims'), { queueToken: queue.items[1].queueToken }),
    201,
    'second claim',
  );
  const session = tidemark.deps.db.$client
    .prepare('select s.id, s.site_id as siteId, s.current_upload_id as uploadId from reads r join test_sessions s on s.id = r.session_id where r.id = ?')
    .get(read.readId) as { id: string; siteId: string; uploadId: string };

  const openQuery = async (question: string) =>
    (await json<{ id: string }>(await send(dataManager, 'POST', studyUrl(`/sessions/${session.id}/queries`), { question }), 201, 'open query')).id;
  const queryId = await openQuery('Please confirm the technician code of this session.');
  const queryToClose = await openQuery('Please confirm the device serial number of this session.');

  // A lock on a session of another site, so the probed session stays writable.
  const elsewhere = tidemark.deps.db.$client
    .prepare(`select id from test_sessions where study_id = ? and site_id != ? order by id limit 1`)
    .get(DEMO_STUDY.id, session.siteId) as { id: string };
  const lock = await json<{ id: string }>(
    await send(dataManager, 'POST', studyUrl('/locks'), { scope: 'session', scopeId: elsewhere.id, reason: 'Matrix fixture lock' }),
    201,
    'lock',
  );

  fixtures = {
    siteId: session.siteId,
    sessionId: session.id,
    uploadId: session.uploadId,
    readId: read.readId,
    readToRelease: readToRelease.readId,
    queryId,
    queryToClose,
    lockId: lock.id,
  };

  // A user who holds a role in another study only.
  const other = await json<{ id: string }>(
    await send(admin, 'POST', `${tidemark.url}/api/studies`, {
      code: 'MATRIX-OTHER',
      title: 'Another study (authorization matrix)',
      sponsor: 'Fictional sponsor',
      indication: 'Asthma',
    }),
    201,
    'create other study',
  );
  await json(
    await send(admin, 'POST', `${tidemark.url}/api/studies/${other.id}/people`, {
      email: OTHER_STUDY_EMAIL,
      name: 'Nadia Otherstudy',
      role: 'monitor',
    }),
    201,
    'add person to other study',
  );

  const token = await json<{ id: string; token: string }>(
    await send(dataManager, 'POST', `${tidemark.url}/api/me/tokens`, { label: 'revoked by the matrix' }),
    201,
    'token',
  );
  expect((await send(dataManager, 'DELETE', `${tidemark.url}/api/me/tokens/${token.id}`)).status).toBe(204);
  revokedToken = token.token;

  const coordinatorEmail = COORDINATOR_OF_SITE[session.siteId];
  const otherCoordinatorEmail = session.siteId === 'site-101' ? 'coordinator.102@tidemark.example' : 'coordinator.101@tidemark.example';
  const emails: Record<string, string> = {
    reader: 'reader.one@tidemark.example',
    admin: 'admin@tidemark.example',
    adjud: 'adjudicator@tidemark.example',
    dm: 'data.manager@tidemark.example',
    mon: 'monitor@tidemark.example',
    coord: coordinatorEmail,
    'c-oth': otherCoordinatorEmail,
    'o-std': OTHER_STUDY_EMAIL,
  };
  clients.set('reader', reader);
  clients.set('admin', admin);
  clients.set('dm', dataManager);
  for (const [column, email] of Object.entries(emails)) {
    if (!clients.has(column)) clients.set(column, await signIn(tidemark.url, email));
  }
}, 180_000);

afterAll(async () => {
  await tidemark?.close();
  if (results.length === 0) return;
  const routes = [...new Set(results.map((result) => result.route))];
  const width = Math.max(...routes.map((route) => route.length));
  const cell = (route: string, column: string) => {
    const result = results.find((r) => r.route === route && r.column === column);
    if (!result) return '?';
    return result.got === result.expected ? result.got : `${result.got ?? result.status}!`;
  };
  const lines = [
    `Authorization matrix: ${routes.length} routes × ${CALLERS.length} callers (probed site: ${fixtures?.siteId}). ` +
      'A allowed, D denied 403, U unauthenticated 401, H hidden 404 (another site), ! differs from the expectation.',
    `| ${'route'.padEnd(width)} | ${CALLERS.map((caller) => caller.column.padEnd(5)).join(' | ')} |`,
    `| ${'-'.repeat(width)} | ${CALLERS.map(() => '-----').join(' | ')} |`,
    ...routes.map((route) => `| ${route.padEnd(width)} | ${CALLERS.map((caller) => cell(route, caller.column).padEnd(5)).join(' | ')} |`),
    '',
    ...CALLERS.map((caller) => `${caller.column}: ${caller.label}`),
  ];
  console.log(lines.join('\n'));
});

/** Fills the path of an OpenAPI route with the fixture ids; `{readId}` of the release route is a read the probe may give back. */
function probeFor(key: string, caller: Caller): Probe {
  const [method, path] = key.split(' ');
  const ids: Record<string, string> = {
    studyId: DEMO_STUDY.id,
    siteId: fixtures.siteId,
    sessionId: fixtures.sessionId,
    uploadId: fixtures.uploadId,
    readId: key.endsWith('/release') ? fixtures.readToRelease : fixtures.readId,
    queryId: key.endsWith('/close') ? fixtures.queryToClose : fixtures.queryId,
    lockId: fixtures.lockId,
    // No release or replay exists in the demo: well-formed ids that name none answer 404 from the handler.
    releaseId: randomUUID(),
    replayId: randomUUID(),
    fileName: 'manifest.json',
    referenceSetId: randomUUID(),
    tokenId: randomUUID(),
    userId: 'user-reader-2',
    role: 'over-reader',
    id: 'ats-ers-2019',
    version: '1',
  };
  let url = tidemark.url + path.replace(/\{(\w+)\}/g, (_match, name: string) => {
    if (!(name in ids)) throw new Error(`${key}: no fixture id for the path parameter {${name}}`);
    return encodeURIComponent(ids[name]);
  });
  if (key === 'get /api/protocols/compare') url += '?from=ats-ers-2019@1&to=ats-ers-2019@1';
  if (key === 'get /api/studies/{studyId}/sessions') url += `?siteId=${fixtures.siteId}`;

  const upperMethod = method.toUpperCase();
  const content = documentPaths[path]?.[method]?.requestBody?.content ?? {};
  const probe = (body?: Probe['body']): Probe => ({ method: upperMethod, url, body });

  switch (key) {
    // Reaches the handler's own role check: the admin gets 409 (the code is taken), everyone else 403.
    case 'post /api/studies':
      return probe({ json: { code: DEMO_STUDY.code, title: 'Duplicate', sponsor: 'Fictional', indication: 'None' } });
    // Reaches the handler's role check: the admin gets 422 (not a reference file; nothing is kept), everyone else 403.
    case 'post /api/reference-sets':
      return probe({ form: () => formWith('not-a-reference.zip', 'not a reference file', { equationsId: 'gli-2012' }) });
  }
  // The site scope of a session, file or query is decided by the handler, after validation: another
  // site's coordinator sends a valid request so that the answer shows the scope decision.
  if (caller.otherSite) {
    switch (key) {
      case 'patch /api/studies/{studyId}/sessions/{sessionId}':
        return probe({ json: { technicianCode: 'TECH-99', reason: 'Probe from another site' } });
      case 'post /api/studies/{studyId}/sessions/{sessionId}/uploads':
        return probe({ form: () => formWith('effort-1.csv', effortCsv(), {}) });
      case 'post /api/studies/{studyId}/queries/{queryId}/answers':
        return probe({ json: { body: 'Answer from another site' } });
    }
  }
  if ('application/json' in content || 'multipart/form-data' in content) return probe({ json: INVALID_BODY });
  return probe();
}

function formWith(fileName: string, text: string, fields: Record<string, string>): FormData {
  const form = new FormData();
  for (const [name, value] of Object.entries(fields)) form.append(name, value);
  form.append('file', new Blob([text], { type: 'text/csv' }), fileName);
  return form;
}

function effortCsv(): string {
  return effortToCsv(generateSession({ efforts: 1, base: { fvcL: 3.2, pefLPerS: 6.5 } }, 7)[0].recording);
}

async function call(caller: Caller, probe: Probe): Promise<Response> {
  const headers = new Headers();
  let body: string | FormData | undefined;
  if (probe.body && 'json' in probe.body) {
    headers.set('content-type', 'application/json');
    body = JSON.stringify(probe.body.json);
  } else if (probe.body) {
    body = probe.body.form();
  }
  if (caller.credential === 'revoked-token') {
    headers.set('authorization', `Bearer ${revokedToken}`);
    return fetch(probe.url, { method: probe.method, headers, body, redirect: 'manual' });
  }
  if (caller.credential === 'none') return fetch(probe.url, { method: probe.method, headers, body, redirect: 'manual' });
  const signedIn = clients.get(caller.column)!;
  headers.set(CSRF_HEADER, signedIn.csrfToken);
  return signedIn.client.fetch(probe.url, { method: probe.method, headers, body });
}

async function messageOf(response: Response): Promise<string> {
  const text = await response.text();
  try {
    return (JSON.parse(text) as { error?: { message?: string } }).error?.message ?? '';
  } catch {
    return '';
  }
}

describe('the authorization matrix', () => {
  it('has an expectation for every route of the OpenAPI document, and none for a route that is gone', () => {
    const documented = Object.entries(documentPaths).flatMap(([path, methods]) => Object.keys(methods).map((method) => `${method} ${path}`));
    expect(documented.filter((route) => !(route in EXPECTED))).toEqual([]);
    expect(Object.keys(EXPECTED).filter((route) => !documented.includes(route))).toEqual([]);
  });

  it('gives every caller of every route the expected outcome', async () => {
    const documented = Object.entries(documentPaths).flatMap(([path, methods]) => Object.keys(methods).map((method) => `${method} ${path}`));
    // Signing out ends the callers' sessions, so it goes last.
    const routes = [...documented.filter((route) => route !== 'post /auth/logout'), 'post /auth/logout'].filter((route) => route in EXPECTED);
    const mismatches: string[] = [];
    for (const route of routes) {
      for (const caller of CALLERS) {
        const expected = expectedOutcome(EXPECTED[route], caller);
        const response = await call(caller, probeFor(route, caller));
        const message = await messageOf(response);
        let got = outcomeOf(response.status);
        if (got === 'A' && response.status === 404 && expected === 'H') got = 'H';
        results.push({ route, column: caller.column, expected, got, status: response.status, message });
        const name = `${route} as ${caller.label}`;
        if (got !== expected) mismatches.push(`${name}: expected ${expected}, got ${response.status} ${message}`);
        else if ((got === 'D' || got === 'U' || got === 'H') && message.trim() === '') {
          mismatches.push(`${name}: ${response.status} without a message saying why`);
        } else if (expected === 'A' && REACHABLE.has(route) && response.status >= 400) {
          mismatches.push(`${name}: the fixture ids should reach the resource, got ${response.status} ${message}`);
        }
      }
    }
    expect(mismatches).toEqual([]);
  }, 300_000);
});

describe('administration across studies (found while drawing up the matrix)', () => {
  it('does not let the admin of another study deactivate an account of this study by first inviting it there', async () => {
    const admin = await signIn(tidemark.url, 'admin@tidemark.example');
    const otherStudy = await json<{ id: string }>(
      await send(admin, 'POST', `${tidemark.url}/api/studies`, { code: 'MATRIX-THIRD', title: 'A third study', sponsor: 'Fictional sponsor', indication: 'Asthma' }),
      201,
      'create third study',
    );
    await json(
      await send(admin, 'POST', `${tidemark.url}/api/studies/${otherStudy.id}/people`, {
        email: 'other.study.admin@tidemark.example',
        name: 'Oskar Otherstudy',
        role: 'study-admin',
      }),
      201,
      'invite the admin of the third study',
    );
    const outsider = await signIn(tidemark.url, 'other.study.admin@tidemark.example');
    expect((await send(outsider, 'GET', studyUrl())).status).toBe(403);
    // Accounts are shared by all studies: inviting an existing e-mail gives that account a role here too.
    await json(
      await send(outsider, 'POST', `${tidemark.url}/api/studies/${otherStudy.id}/people`, {
        email: 'reader.two@tidemark.example',
        name: 'Dr Rafael Quintero',
        role: 'monitor',
      }),
      201,
      'invite a reader of the demo study',
    );
    const deactivation = await send(outsider, 'POST', `${tidemark.url}/api/studies/${otherStudy.id}/people/user-reader-2/deactivate`, {
      reason: 'Not needed in this study',
    });
    expect(deactivation.status).toBe(403);
    expect((await signIn(tidemark.url, 'reader.two@tidemark.example')).csrfToken).not.toBe('');
  }, 120_000);
});

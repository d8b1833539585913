/**
 * Blinding, enforced by the server: an over-reader works a real read (claim, save, open a query),
 * then every route a reader may call, taken from the OpenAPI document, is called with the
 * reader's own ids, and every body (errors included) is searched for anything that identifies
 * the site, the subject, the visit date, the technician, the device, the file or other people.
 */
import { afterAll, beforeAll, describe, expect, it } from '@jest/globals';
import type { QueuePage, ReadWorkspace } from '../../shared/contracts/reading.js';
import { DEMO_SITES, DEMO_STUDY, DEMO_USERS } from '../../server/seed/demo-study.js';
import { signIn, startTidemarkForTest, type CookieClient } from '../support/tidemark-under-test.js';

type Running = Awaited<ReturnType<typeof startTidemarkForTest>>;
let tidemark: Running;
let reader: { client: CookieClient; csrfToken: string };
let workspace: ReadWorkspace;
let queryId: string;
const studyUrl = () => `${tidemark.url}/api/studies/${DEMO_STUDY.id}`;

interface Operation {
  readonly path: string;
  readonly method: string;
  readonly access: { kind: string; roles?: string[] };
  readonly hasBody: boolean;
}

beforeAll(async () => {
  tidemark = await startTidemarkForTest();
  reader = await signIn(tidemark.url, 'reader.one@tidemark.example');
  const headers = { 'content-type': 'application/json', 'x-csrf-token': reader.csrfToken };
  const queue = (await (await reader.client.fetch(`${studyUrl()}/reading/queue`)).json()) as QueuePage;
  const claim = await reader.client.fetch(`${studyUrl()}/reading/claims`, {
    method: 'POST',
    headers,
    body: JSON.stringify({ queueToken: queue.items[0].queueToken }),
  });
  expect(claim.status).toBe(201);
  workspace = (await claim.json()) as ReadWorkspace;
  const saved = await reader.client.fetch(`${studyUrl()}/reads/${workspace.readId}`, {
    method: 'PUT',
    headers,
    body: JSON.stringify({ version: workspace.version, verdicts: workspace.verdicts, feedbackText: 'Good blows; keep coaching the end.' }),
  });
  expect(saved.status).toBe(200);
  const query = await reader.client.fetch(`${studyUrl()}/reads/${workspace.readId}/queries`, {
    method: 'POST',
    headers,
    body: JSON.stringify({ question: 'Was effort 2 stopped by the technician?', requestRepeat: false }),
  });
  expect(query.status).toBe(201);
  queryId = ((await query.json()) as { id: string }).id;
});
afterAll(async () => {
  await tidemark?.close();
});

/** Everything that would unblind a reader if it appeared in what they receive. */
function forbiddenValues(sessionId: string): string[] {
  const db = tidemark.deps.db.$client;
  const values = new Set<string>();
  const add = (value: unknown) => {
    if (typeof value === 'string' && value.length >= 4) values.add(value);
  };
  for (const site of DEMO_SITES) {
    add(site.id);
    add(site.name);
  }
  for (const code of db.prepare('select code from subjects').pluck().all()) add(code);
  const session = db
    .prepare(
      `select id, tested_at as testedAt, technician_code as technician, device_serial_number as serial,
              registered_by as registeredBy, current_upload_id as uploadId
         from test_sessions where id = ?`,
    )
    .get(sessionId) as Record<string, string | null>;
  add(session['id']);
  add(session['testedAt']);
  add(session['testedAt']?.slice(0, 10)); // the visit date alone
  add(session['technician']);
  add(session['serial']);
  add(session['uploadId']);
  for (const name of db.prepare('select original_name from uploads where session_id = ?').pluck().all(sessionId)) add(name);
  for (const user of DEMO_USERS.filter((candidate) => candidate.id !== 'user-reader-1')) {
    add(user.name);
    add(user.email);
    add(user.id);
  }
  return [...values];
}

function readerOperations(doc: { paths: Record<string, Record<string, { 'x-tidemark-access': Operation['access']; requestBody?: unknown }>> }): Operation[] {
  return Object.entries(doc.paths).flatMap(([path, methods]) =>
    Object.entries(methods)
      .filter(([, operation]) => {
        const access = operation['x-tidemark-access'];
        return access.kind === 'signed-in' || (access.roles ?? []).some((role) => role === 'over-reader' || role === 'adjudicator');
      })
      .map(([method, operation]) => ({ path, method, access: operation['x-tidemark-access'], hasBody: operation.requestBody !== undefined })),
  );
}

describe('blinding of every reader-facing route', () => {
  it('never shows a reader the site, subject, dates, technician, device, file names or other people', async () => {
    const sessionId = tidemark.deps.db.$client.prepare('select session_id from reads where id = ?').pluck().get(workspace.readId) as string;
    const forbidden = forbiddenValues(sessionId);
    expect(forbidden.length).toBeGreaterThan(20);

    const doc = await (await reader.client.fetch(`${tidemark.url}/api/openapi.json`)).json();
    const operations = readerOperations(doc as never);
    expect(operations.length).toBeGreaterThan(10);
    const ids: Record<string, string> = {
      studyId: DEMO_STUDY.id,
      readId: workspace.readId,
      queryId,
      // Ids a reader is never given: a route that takes one must refuse without naming anything.
      sessionId,
      siteId: DEMO_SITES[0].id,
      uploadId: 'unknown-upload',
    };
    const walked: string[] = [];
    const leaks: string[] = [];
    for (const operation of operations) {
      // Writes without a body would change the read (release, sign) and are covered by the reading suite.
      if (operation.method !== 'get' && !operation.hasBody) continue;
      const url = tidemark.url + operation.path.replace(/\{(\w+)\}/g, (_m, name: string) => encodeURIComponent(ids[name] ?? 'x'));
      const response = await reader.client.fetch(url, {
        method: operation.method.toUpperCase(),
        headers: { 'content-type': 'application/json', 'x-csrf-token': reader.csrfToken },
        // An empty body: every write is refused by its validation, and the refusal is checked too.
        body: operation.method === 'get' ? undefined : '{}',
      });
      const text = `${JSON.stringify([...response.headers.entries()])}\n${await response.text()}`;
      walked.push(`${operation.method.toUpperCase()} ${operation.path} -> ${response.status}`);
      for (const value of forbidden) {
        if (text.includes(value)) leaks.push(`${operation.method.toUpperCase()} ${operation.path} (${response.status}) shows "${value}"`);
      }
    }
    expect(walked.length).toBeGreaterThan(10);
    expect(walked.some((line) => line.includes('/reads/{readId} ') && line.endsWith('200'))).toBe(true);
    expect(leaks).toEqual([]);
  });

  it("keeps the audit trail, the sessions and the sites out of a reader's reach", async () => {
    for (const path of ['/audit', '/sessions', '/sites', `/sessions/x/feedback`]) {
      const response = await reader.client.fetch(`${studyUrl()}${path}`);
      expect({ path, status: response.status }).toEqual({ path, status: 403 });
    }
  });
});

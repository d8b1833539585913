/**
 * Malformed request bodies: for every route of the OpenAPI document that takes a JSON body,
 * fast-check sends arbitrary JSON and objects shaped like the route's schema with some fields of
 * the wrong type or at extremes, as a caller who holds the route's role, with real demo ids in
 * the path. Every answer must be below 500, with a message for every refusal.
 *
 * Runs per route: TIDEMARK_FUZZ_RUNS (default {@link DEFAULT_RUNS}); replay a failure with
 * TIDEMARK_FUZZ_SEED=<seed> TIDEMARK_FUZZ_PATH=<path>.
 */
import { afterAll, beforeAll, describe, expect, it } from '@jest/globals';
import fc from 'fast-check';
import request from 'supertest';
import { CSRF_HEADER, type Role } from '../../shared/contracts/auth.js';
import type { QueuePage, ReadWorkspace } from '../../shared/contracts/reading.js';
import type { Schedule } from '../../shared/contracts/sessions.js';
import { SESSION_DOCUMENT_FORMAT, recordingToSessionEffort } from '../../shared/spirometry/session-document.js';
import { generateSession } from '../../shared/spirometry/synthetic/curve-generator.js';
import { DEMO_STUDY } from '../../server/seed/demo-study.js';
import { signIn, startTidemarkForTest } from '../support/tidemark-under-test.js';

type Running = Awaited<ReturnType<typeof startTidemarkForTest>>;
type JsonSchema = {
  type?: string | string[];
  properties?: Record<string, JsonSchema>;
  required?: string[];
  items?: JsonSchema;
  anyOf?: JsonSchema[];
  enum?: unknown[];
  const?: unknown;
  format?: string;
  pattern?: string;
  minLength?: number;
  maxLength?: number;
  minimum?: number;
  maximum?: number;
  exclusiveMinimum?: number;
  maxItems?: number;
  minItems?: number;
};
type Operation = {
  'x-tidemark-access': { kind: 'public' | 'signed-in' | 'study'; roles?: Role[] };
  requestBody?: { content: Record<string, { schema: JsonSchema }> };
};

const DEFAULT_RUNS = 30;
const RUNS = Number(process.env['TIDEMARK_FUZZ_RUNS'] ?? DEFAULT_RUNS);
/** Generous time for all routes: about 30 routes at a few milliseconds a body, ten times allowed. */
const FUZZ_TIMEOUT_MS = 120_000 + RUNS * 30 * 100;
const fuzzSettings = (): fc.Parameters<unknown> => ({
  numRuns: RUNS,
  // The server keeps state between runs, so a shrunk replay would not see the same server: report the first failure as found.
  endOnFailure: true,
  ...(process.env['TIDEMARK_FUZZ_SEED'] ? { seed: Number(process.env['TIDEMARK_FUZZ_SEED']), path: process.env['TIDEMARK_FUZZ_PATH'] } : {}),
});

/** The demo user who acts for each role; the first role of this order that a route allows is used. */
const ACTOR_OF_ROLE: readonly [Role, string][] = [
  ['data-manager', 'data.manager@tidemark.example'],
  ['study-admin', 'admin@tidemark.example'],
  ['site-coordinator', 'coordinator.101@tidemark.example'],
  ['over-reader', 'reader.one@tidemark.example'],
  ['adjudicator', 'adjudicator@tidemark.example'],
  ['monitor', 'monitor@tidemark.example'],
];
/** Values a field should not hold. */
const HOSTILE_VALUES: readonly unknown[] = [
  null, true, 0, -1, 1e308, -1e308, 5e-324, 2 ** 53 + 1, '', ' ', 'NaN', 'Infinity', '💨🫁', '\u0000', 'x'.repeat(10_000),
  [], {}, [null], JSON.parse('{"__proto__":{"polluted":true}}'), '<script>alert(1)</script>', '../../etc/passwd', "'; drop table users; --",
];

let tidemark: Running;
let paths: Record<string, Record<string, Operation>>;
const callers = new Map<string, { cookie: string; csrfToken: string }>();
const ids: Record<string, string> = {};
const statusTally = new Map<string, Map<number, number>>();

beforeAll(async () => {
  // Long runs leave a caller idle for longer than the default 30 minutes; a 401 would then hide the route's own answers.
  tidemark = await startTidemarkForTest({ TIDEMARK_SEED_DEMO_SESSIONS: 'false', TIDEMARK_SESSION_IDLE_MINUTES: '1440', TIDEMARK_SESSION_MAX_HOURS: '48' });
  paths = ((await (await fetch(`${tidemark.url}/api/openapi.json`)).json()) as { paths: typeof paths }).paths;
  const origin = new URL(tidemark.url).origin;
  for (const [, email] of ACTOR_OF_ROLE) {
    const signedIn = await signIn(tidemark.url, email);
    callers.set(email, { cookie: `tidemark_session=${signedIn.client.cookie(origin, 'tidemark_session')}`, csrfToken: signedIn.csrfToken });
  }

  // Real ids, so that a body the schema accepts reaches a resource: a checked session of site 101, reader one's read of it, a query on it.
  const studyPath = `/api/studies/${DEMO_STUDY.id}`;
  const coordinator = callers.get('coordinator.101@tidemark.example')!;
  const schedule = (await as(coordinator, 'get', `${studyPath}/schedule`)).body as Schedule;
  expect((await as(coordinator, 'post', `${studyPath}/sites/site-101/subjects`).send({ code: 'BF101-001' })).status).toBe(201);
  const registered = await as(coordinator, 'post', `${studyPath}/sites/site-101/sessions`).send({
    subjectCode: 'BF101-001',
    visitCode: schedule.visits[0].code,
    timepointCode: schedule.timepoints[0].code,
    bronchodilator: 'pre',
    testedAt: '2026-11-20T09:30:00+01:00',
    demographics: { ageYears: 61, heightCm: 172, weightKg: 80, sex: 'male' },
    technicianCode: 'TECH-07',
  });
  expect(registered.status).toBe(201);
  const sessionId = (registered.body as { id: string }).id;
  const document = {
    format: SESSION_DOCUMENT_FORMAT,
    metadata: {},
    efforts: generateSession({ efforts: 3, base: { fvcL: 3.2, pefLPerS: 6.5 } }, 11).map((effort) => recordingToSessionEffort(effort.recording)),
  };
  const uploaded = await as(coordinator, 'post', `${studyPath}/sessions/${sessionId}/uploads`).attach('file', Buffer.from(JSON.stringify(document)), 'session.json');
  expect(uploaded.status).toBe(201);
  const reader = callers.get('reader.one@tidemark.example')!;
  const queue = (await as(reader, 'get', `${studyPath}/reading/queue`)).body as QueuePage;
  const claimed = await as(reader, 'post', `${studyPath}/reading/claims`).send({ queueToken: queue.items[0].queueToken });
  expect(claimed.status).toBe(201);
  const query = await as(callers.get('data.manager@tidemark.example')!, 'post', `${studyPath}/sessions/${sessionId}/queries`).send({
    question: 'Please confirm the technician code of this session.',
  });
  expect(query.status).toBe(201);
  Object.assign(ids, {
    studyId: DEMO_STUDY.id,
    siteId: 'site-101',
    sessionId,
    readId: (claimed.body as ReadWorkspace).readId,
    queryId: (query.body as { id: string }).id,
    lockId: 'no-such-lock',
    userId: 'user-reader-2',
    role: 'over-reader',
    tokenId: 'no-such-token',
  });
}, 180_000);

afterAll(async () => {
  await tidemark?.close();
  const lines = [...statusTally].map(([route, counts]) => `| ${route} | ${[...counts].sort(([a], [b]) => a - b).map(([status, n]) => `${status}×${n}`).join(' ')} |`);
  if (lines.length) console.log([`Body fuzz: ${RUNS} bodies per route`, '| route | statuses |', '| --- | --- |', ...lines].join('\n'));
});

function as(caller: { cookie: string; csrfToken: string } | undefined, method: string, path: string) {
  const call = request(tidemark.url)[method as 'post'](path).timeout(30_000);
  return caller ? call.set('cookie', caller.cookie).set(CSRF_HEADER, caller.csrfToken) : call;
}

/** The caller for a route: anonymous for public routes, the admin for any signed-in caller, else a holder of an allowed role. */
function callerFor(operation: Operation): { cookie: string; csrfToken: string } | undefined {
  const access = operation['x-tidemark-access'];
  if (access.kind === 'public') return undefined;
  if (access.kind === 'signed-in') return callers.get('admin@tidemark.example');
  const actor = ACTOR_OF_ROLE.find(([role]) => access.roles!.includes(role));
  if (!actor) throw new Error(`No demo user holds any of ${access.roles!.join(', ')}`);
  return callers.get(actor[1]);
}

/** A value of the schema's shape, with a field now and then of the wrong type or at an extreme. */
function shapedLike(schema: JsonSchema, depth = 0): fc.Arbitrary<unknown> {
  const hostile = fc.constantFrom(...HOSTILE_VALUES);
  const fitting = fittingValue(schema, depth);
  return fc.oneof({ weight: 4, arbitrary: fitting }, { weight: 1, arbitrary: hostile });
}

function fittingValue(schema: JsonSchema, depth: number): fc.Arbitrary<unknown> {
  if (depth > 4) return fc.constant(null);
  if (schema.anyOf) return fc.oneof(...schema.anyOf.map((option) => fittingValue(option, depth + 1)));
  if (schema.const !== undefined) return fc.constant(schema.const);
  if (schema.enum) return fc.constantFrom(...schema.enum);
  const type = Array.isArray(schema.type) ? schema.type : schema.type ? [schema.type] : [];
  if (type.length > 1) return fc.oneof(...type.map((single) => fittingValue({ ...schema, type: single }, depth)));
  switch (type[0]) {
    case 'object': {
      const properties = schema.properties ?? {};
      const model = Object.fromEntries(Object.entries(properties).map(([key, property]) => [key, shapedLike(property, depth + 1)]));
      return fc.record(model, { requiredKeys: (schema.required ?? []).filter((key) => key in properties) });
    }
    case 'array':
      return fc.array(shapedLike(schema.items ?? {}, depth + 1), { minLength: schema.minItems ?? 0, maxLength: Math.min(schema.maxItems ?? 4, 4) });
    case 'string':
      return stringLike(schema);
    case 'integer':
      return fc.oneof(
        fc.integer({ min: Math.max(schema.minimum ?? -1e6, -1e6), max: Math.min(schema.maximum ?? 1e6, 1e6) }),
        fc.constantFrom(0, -1, 2 ** 31, 2 ** 53 - 1),
      );
    case 'number':
      return fc.oneof(
        fc.double({ min: schema.minimum ?? -1e6, max: schema.maximum ?? 1e6, noNaN: true }),
        fc.constantFrom(0, -0, 1e-300, 1e308, 5e-324),
      );
    case 'boolean':
      return fc.boolean();
    default:
      return fc.jsonValue({ maxDepth: 2 });
  }
}

function stringLike(schema: JsonSchema): fc.Arbitrary<string> {
  const maxLength = Math.min(schema.maxLength ?? 40, 40);
  const text = fc.string({ unit: 'grapheme', minLength: Math.min(schema.minLength ?? 0, maxLength), maxLength });
  if (schema.format === 'date-time') {
    return fc.oneof(
      fc.date({ min: new Date('1900-01-01'), max: new Date('2100-01-01'), noInvalidDate: true }).map((date) => date.toISOString()),
      fc.constantFrom('2026-11-20T09:30:00+01:00', '2026-02-30T25:61:00Z', '0000-01-01T00:00:00Z', '9999-12-31T23:59:59.999999999+14:00'),
      text,
    );
  }
  if (schema.format === 'email') return fc.oneof(fc.emailAddress(), text);
  if (schema.pattern) {
    let matching: fc.Arbitrary<string> | undefined;
    try {
      matching = fc.stringMatching(new RegExp(schema.pattern)).filter((value) => value.length <= (schema.maxLength ?? 200));
    } catch {
      matching = undefined;
    }
    if (matching) return fc.oneof({ weight: 3, arbitrary: matching }, { weight: 1, arbitrary: text });
  }
  return text;
}

function jsonBodyRoutes(): { key: string; method: string; path: string; operation: Operation; schema: JsonSchema }[] {
  const routes = Object.entries(paths).flatMap(([path, methods]) =>
    Object.entries(methods)
      .filter(([, operation]) => operation.requestBody?.content['application/json'])
      .map(([method, operation]) => ({
        key: `${method} ${path}`,
        method,
        path,
        operation,
        schema: operation.requestBody!.content['application/json'].schema,
      })),
  );
  // A lock that a fuzzed body happened to make would refuse later writes: locks go last.
  return [...routes.filter((route) => !route.path.includes('/locks')), ...routes.filter((route) => route.path.includes('/locks'))];
}

describe('fuzzed JSON bodies on every route that takes one', () => {
  it('finds the JSON-body routes in the OpenAPI document', () => {
    expect(jsonBodyRoutes().length).toBeGreaterThanOrEqual(20);
  });

  it('answers every body below 500, with a message for every refusal', async () => {
    const failures: string[] = [];
    for (const route of jsonBodyRoutes()) {
      const caller = callerFor(route.operation);
      const url = route.path.replace(/\{(\w+)\}/g, (_match, name: string) => {
        if (!(name in ids)) throw new Error(`${route.key}: no id for the path parameter {${name}}`);
        return encodeURIComponent(ids[name]);
      });
      const counts = new Map<number, number>();
      statusTally.set(route.key, counts);
      const bodies = fc.oneof(fc.jsonValue(), shapedLike(route.schema));
      // Every route is fuzzed even when an earlier one fails; the failures are listed together.
      await fc
        .assert(
          fc.asyncProperty(bodies, async (body) => {
            const response = await as(caller, route.method, url).set('content-type', 'application/json').send(JSON.stringify(body));
            counts.set(response.status, (counts.get(response.status) ?? 0) + 1);
            const shown = JSON.stringify(body)?.slice(0, 300);
            if (response.status >= 500) throw new Error(`${route.key} with ${shown}: answered ${response.status} ${response.text.slice(0, 300)}`);
            if (response.status >= 400) {
              const error = (response.body as { error?: { message?: unknown; code?: unknown } }).error;
              if (typeof error?.message !== 'string' || error.message.trim() === '') {
                throw new Error(`${route.key} with ${shown}: ${response.status} without a message: ${response.text.slice(0, 300)}`);
              }
              // The caller's session must outlive the run, or the route's own answers go unseen.
              if (['unauthenticated', 'session-expired', 'session-invalid'].includes(String(error.code))) {
                throw new Error(`${route.key}: the fuzzing caller was signed out (${String(error.code)})`);
              }
            }
          }),
          fuzzSettings(),
        )
        .catch((error: unknown) => failures.push((error as Error).message.split('\n').filter((line) => /seed|answered|without a message|signed out/.test(line)).join('\n')));
    }
    expect(failures).toEqual([]);
    const health = await request(tidemark.url).get('/api/health');
    expect(health.status).toBe(200);
  }, FUZZ_TIMEOUT_MS);
});

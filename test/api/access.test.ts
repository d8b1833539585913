import { afterAll, beforeAll, describe, expect, it } from '@jest/globals';
import { DEMO_SITES, DEMO_STUDY, DEMO_USERS } from '../../server/seed/demo-study.js';
import { signIn, startTidemarkForTest } from '../support/tidemark-under-test.js';

type Running = Awaited<ReturnType<typeof startTidemarkForTest>>;
let tidemark: Running;
let now = new Date('2026-12-01T09:00:00Z');

beforeAll(async () => {
  tidemark = await startTidemarkForTest({}, { clock: () => now });
});
afterAll(async () => {
  await tidemark.close();
});

const studyUrl = () => `${tidemark.url}/api/studies/${DEMO_STUDY.id}`;

describe('health and the API description', () => {
  it('reports database, storage, identity provider and mail as up', async () => {
    const response = await fetch(`${tidemark.url}/api/health`);
    const body = (await response.json()) as { status: string; checks: Record<string, { status: string }> };
    expect(response.status).toBe(200);
    expect(body.status).toBe('ok');
    expect(Object.fromEntries(Object.entries(body.checks).map(([k, v]) => [k, v.status]))).toEqual({
      database: 'up',
      storage: 'up',
      identityProvider: 'up',
      mail: 'up',
    });
  });

  it('describes every route with its access rule, and refuses every non-public route to an anonymous caller', async () => {
    const doc = (await (await fetch(`${tidemark.url}/api/openapi.json`)).json()) as {
      openapi: string;
      paths: Record<string, Record<string, { 'x-tidemark-access': { kind: string } }>>;
    };
    expect(doc.openapi).toBe('3.1.0');
    const operations = Object.entries(doc.paths).flatMap(([path, methods]) =>
      Object.entries(methods).map(([method, operation]) => ({ path, method, access: operation['x-tidemark-access'] })),
    );
    expect(operations.length).toBeGreaterThanOrEqual(10);
    for (const operation of operations) expect(['public', 'signed-in', 'study']).toContain(operation.access.kind);

    for (const operation of operations.filter((o) => o.access.kind !== 'public')) {
      const url = tidemark.url + operation.path.replace(/\{(\w+)\}/g, (_m, name: string) =>
        name === 'studyId' ? DEMO_STUDY.id : name === 'siteId' ? DEMO_SITES[0].id : 'x');
      const response = await fetch(url, { method: operation.method.toUpperCase(), redirect: 'manual' });
      expect({ route: `${operation.method} ${operation.path}`, status: response.status }).toEqual({
        route: `${operation.method} ${operation.path}`,
        status: 401,
      });
    }
  });

  it('documents every route the app mounts, so none can bypass the registry and its access rule', async () => {
    const doc = (await (await fetch(`${tidemark.url}/api/openapi.json`)).json()) as { paths: Record<string, object> };
    const documented = new Set(
      Object.entries(doc.paths).flatMap(([path, methods]) =>
        Object.keys(methods).map((method) => `${method} ${path.replace(/\{(\w+)\}/g, ':$1')}`),
      ),
    );
    type Layer = { route?: { path: string; methods: Record<string, boolean> }; handle?: { stack?: Layer[] } };
    const mounted: string[] = [];
    const walk = (stack: Layer[]) => {
      for (const layer of stack) {
        if (layer.route) {
          for (const method of Object.keys(layer.route.methods)) mounted.push(`${method} ${layer.route.path}`);
        }
        if (layer.handle?.stack) walk(layer.handle.stack);
      }
    };
    walk((tidemark.app as unknown as { router: { stack: Layer[] } }).router.stack);
    const apiRoutes = mounted.filter((route) => / \/(api|auth)\//.test(route));
    expect(apiRoutes.length).toBeGreaterThanOrEqual(10);
    expect(apiRoutes.filter((route) => !documented.has(route))).toEqual([]);
  });

  it('answers an unknown API path with a JSON 404 naming it', async () => {
    const response = await fetch(`${tidemark.url}/api/no-such-thing`);
    expect(response.status).toBe(404);
    expect(((await response.json()) as { error: { message: string } }).error.message).toContain('/api/no-such-thing');
  });
});

describe('sign-in through the identity provider, per role', () => {
  it.each(DEMO_USERS.map((user) => [user.email, user] as const))('%s gets their own roles', async (_email, user) => {
    const { client, callback } = await signIn(tidemark.url, user.email);
    expect(callback.status).toBe(303);
    expect(callback.headers.get('location')).toBe('/site-desk');
    const me = (await (await client.fetch(`${tidemark.url}/api/me`)).json()) as {
      user: { email: string };
      assignments: { role: string; siteIds: string[] | null }[];
      csrfToken: string;
    };
    expect(me.user.email).toBe(user.email);
    expect(me.assignments.map((a) => a.role).sort()).toEqual(user.roles.map((r) => r.role).sort());
    expect(me.csrfToken.length).toBeGreaterThan(20);
  });

  it('refuses a wrong password at the identity provider', async () => {
    await expect(signIn(tidemark.url, 'monitor@tidemark.example', 'wrong')).rejects.toThrow('refused');
  });

  it('refuses a callback that did not start in this browser', async () => {
    const response = await fetch(`${tidemark.url}/auth/callback?state=forged&code=forged`, { redirect: 'manual' });
    expect(response.status).toBe(303);
    expect(response.headers.get('location')).toContain('error=login-mismatch');
  });

  it('never redirects a fresh session to another host', async () => {
    const response = await fetch(`${tidemark.url}/auth/login?returnTo=//attacker.example/x`, { redirect: 'manual' });
    expect(response.status).toBe(303);
    const state = new URL(response.headers.get('location')!).searchParams.get('state')!;
    const row = tidemark.deps.db.$client.prepare('select return_to from login_attempts where state = ?').get(state) as {
      return_to: string;
    };
    expect(row.return_to).toBe('/');
  });
});

describe('roles and scopes are checked on the server', () => {
  it('gives an over-reader 403 on the site list that data managers use (readers are blinded to sites)', async () => {
    const reader = await signIn(tidemark.url, 'reader.one@tidemark.example');
    const refused = await reader.client.fetch(`${studyUrl()}/sites`);
    expect(refused.status).toBe(403);
    expect(((await refused.json()) as { error: { message: string } }).error.message).toMatch(/data manager/);

    const manager = await signIn(tidemark.url, 'data.manager@tidemark.example');
    const allowed = await manager.client.fetch(`${studyUrl()}/sites`);
    expect(allowed.status).toBe(200);
    expect(((await allowed.json()) as unknown[]).length).toBe(DEMO_SITES.length);
  });

  it('shows a site coordinator their own sites only, and refuses another site', async () => {
    const coordinator = await signIn(tidemark.url, 'coordinator.101@tidemark.example');
    const list = (await (await coordinator.client.fetch(`${studyUrl()}/sites`)).json()) as { id: string }[];
    expect(list.map((site) => site.id)).toEqual(['site-101']);
    expect((await coordinator.client.fetch(`${studyUrl()}/sites/site-101`)).status).toBe(200);
    const other = await coordinator.client.fetch(`${studyUrl()}/sites/site-201`);
    expect(other.status).toBe(403);
    expect(((await other.json()) as { error: { code: string } }).error.code).toBe('site-out-of-scope');
  });

  it('refuses a study in which the caller holds no role', async () => {
    const monitor = await signIn(tidemark.url, 'monitor@tidemark.example');
    const response = await monitor.client.fetch(`${tidemark.url}/api/studies/another-study`);
    expect(response.status).toBe(403);
    expect(((await response.json()) as { error: { message: string } }).error.message).toContain('no role in this study');
  });
});

describe('sessions, CSRF and API tokens', () => {
  it('refuses a forged session cookie with a clear reason', async () => {
    const response = await fetch(`${tidemark.url}/api/me`, { headers: { cookie: 'tidemark_session=forged-value' } });
    expect(response.status).toBe(401);
    const body = (await response.json()) as { error: { code: string; message: string } };
    expect(body.error.code).toBe('session-invalid');
    expect(body.error.message).toMatch(/sign in again/i);
  });

  it('expires a session after the idle limit', async () => {
    const { client } = await signIn(tidemark.url, 'monitor@tidemark.example');
    expect((await client.fetch(`${tidemark.url}/api/me`)).status).toBe(200);
    const started = now;
    now = new Date(started.getTime() + 31 * 60_000);
    try {
      const response = await client.fetch(`${tidemark.url}/api/me`);
      expect(response.status).toBe(401);
      expect(((await response.json()) as { error: { code: string } }).error.code).toBe('session-expired');
    } finally {
      now = started;
    }
  });

  it('refuses writes with a missing or wrong CSRF token, and accepts the right one', async () => {
    const { client, csrfToken } = await signIn(tidemark.url, 'coordinator.101@tidemark.example');
    const post = (headers: Record<string, string>) =>
      client.fetch(`${tidemark.url}/api/me/tokens`, {
        method: 'POST',
        headers: { 'content-type': 'application/json', ...headers },
        body: JSON.stringify({ label: 'site middleware' }),
      });
    const missing = await post({});
    expect(missing.status).toBe(403);
    expect(((await missing.json()) as { error: { code: string } }).error.code).toBe('csrf-missing');
    const wrong = await post({ 'x-csrf-token': 'not-the-token' });
    expect(((await wrong.json()) as { error: { code: string } }).error.code).toBe('csrf-invalid');
    expect((await post({ 'x-csrf-token': csrfToken })).status).toBe(201);
  });

  it('gives a bearer token exactly its owner’s scope, stores only its hash, and refuses it once revoked', async () => {
    const { client, csrfToken } = await signIn(tidemark.url, 'coordinator.201@tidemark.example');
    const created = (await (
      await client.fetch(`${tidemark.url}/api/me/tokens`, {
        method: 'POST',
        headers: { 'content-type': 'application/json', 'x-csrf-token': csrfToken },
        body: JSON.stringify({ label: 'spirometer bridge' }),
      })
    ).json()) as { id: string; token: string };
    const stored = tidemark.deps.db.$client.prepare('select token_hash from api_tokens where id = ?').get(created.id) as {
      token_hash: string;
    };
    expect(stored.token_hash).not.toContain(created.token);

    const bearer = { authorization: `Bearer ${created.token}` };
    const sites = (await (await fetch(`${studyUrl()}/sites`, { headers: bearer })).json()) as { id: string }[];
    expect(sites.map((site) => site.id)).toEqual(['site-201', 'site-301']);
    expect((await fetch(`${studyUrl()}/sites/site-101`, { headers: bearer })).status).toBe(403);

    const revoke = await client.fetch(`${tidemark.url}/api/me/tokens/${created.id}`, {
      method: 'DELETE',
      headers: { 'x-csrf-token': csrfToken },
    });
    expect(revoke.status).toBe(204);
    const refused = await fetch(`${tidemark.url}/api/me`, { headers: bearer });
    expect(refused.status).toBe(401);
    expect(((await refused.json()) as { error: { code: string } }).error.code).toBe('token-revoked');
    const unknown = await fetch(`${tidemark.url}/api/me`, { headers: { authorization: 'Bearer tmk_unknown' } });
    expect(((await unknown.json()) as { error: { code: string } }).error.code).toBe('token-invalid');
  });

  it('ends the session on sign-out, and makes the next sign-in in that browser ask for the password again', async () => {
    const { client, csrfToken } = await signIn(tidemark.url, 'admin@tidemark.example');
    const out = await client.fetch(`${tidemark.url}/auth/logout`, { method: 'POST', headers: { 'x-csrf-token': csrfToken } });
    expect(out.status).toBe(204);
    expect((await client.fetch(`${tidemark.url}/api/me`)).status).toBe(401);

    const again = await client.fetch(`${tidemark.url}/auth/login?returnTo=/setup`);
    const authorizationUrl = new URL(again.headers.get('location')!);
    expect(authorizationUrl.searchParams.get('prompt')).toBe('login');
    const afterThat = await client.fetch(`${tidemark.url}/auth/login?returnTo=/setup`);
    expect(new URL(afterThat.headers.get('location')!).searchParams.get('prompt')).toBeNull();
  });
});

describe('published formats', () => {
  it('publishes the session JSON Schema and the finding codes', async () => {
    const schema = (await (await fetch(`${tidemark.url}/api/formats/tidemark-session.schema.json`)).json()) as {
      properties: { format: { const: string } };
    };
    expect(schema.properties.format.const).toBe('tidemark-session/1');
    const codes = (await (await fetch(`${tidemark.url}/api/formats/finding-codes`)).json()) as { code: string }[];
    expect(codes.map((c) => c.code)).toEqual(expect.arrayContaining(['bev-excessive', 'end-early', 'cough-first-second']));
  });
});

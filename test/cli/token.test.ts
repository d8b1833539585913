import { afterAll, beforeAll, describe, expect, it } from '@jest/globals';
import { spawnSync } from 'node:child_process';
import { startTidemarkForTest } from '../support/tidemark-under-test.js';

let tidemark: Awaited<ReturnType<typeof startTidemarkForTest>>;

beforeAll(async () => {
  tidemark = await startTidemarkForTest();
});
afterAll(async () => {
  await tidemark.close();
});

/** Runs the token command the way the README shows it, against the test's database. */
function runTokenCommand(...args: string[]) {
  return spawnSync('npm', ['run', '--silent', 'token', '--', ...args], {
    env: { ...process.env, TIDEMARK_DATA_DIR: tidemark.dataDir, LOG_LEVEL: 'silent' },
    encoding: 'utf8',
    timeout: 60_000,
  });
}

describe('npm run --silent token -- --email EMAIL', () => {
  it('prints only a token, which acts with exactly that user’s roles', async () => {
    const result = runTokenCommand('--email', 'data.manager@tidemark.example');
    expect(result.status).toBe(0);
    expect(result.stdout).toMatch(/^tmk_[\w-]{40,}\n$/);
    const me = await fetch(`${tidemark.url}/api/me`, { headers: { authorization: `Bearer ${result.stdout.trim()}` } });
    expect(me.status).toBe(200);
    const body = (await me.json()) as { user: { email: string }; assignments: { role: string }[] };
    expect(body.user.email).toBe('data.manager@tidemark.example');
    expect(body.assignments.map((a) => a.role)).toEqual(['data-manager']);
  });

  it('refuses an unknown user with a clear message and prints no token', () => {
    const result = runTokenCommand('--email', 'nobody@tidemark.example');
    expect(result.status).toBe(1);
    expect(result.stdout).toBe('');
    expect(result.stderr).toContain('There is no user with e-mail nobody@tidemark.example');
  });

  it('explains its usage when the e-mail is missing', () => {
    const result = runTokenCommand();
    expect(result.status).toBe(2);
    expect(result.stderr).toContain('--email');
  });
});

import { afterAll, beforeAll, describe, expect, it } from '@jest/globals';
import { startTidemarkForTest } from '../support/tidemark-under-test.js';

let tidemark: Awaited<ReturnType<typeof startTidemarkForTest>>;

// Port 9 (discard) has no listener here: these settings point at services that are down.
beforeAll(async () => {
  tidemark = await startTidemarkForTest({
    TIDEMARK_S3_ENDPOINT: 'http://127.0.0.1:9',
    TIDEMARK_SMTP_URL: 'smtp://127.0.0.1:9',
  });
});
afterAll(async () => {
  await tidemark.close();
});

describe('GET /api/health with services down', () => {
  it('answers 503, names each component that is down and why, and keeps the others up', async () => {
    const response = await fetch(`${tidemark.url}/api/health`);
    expect(response.status).toBe(503);
    const body = (await response.json()) as {
      status: string;
      checks: Record<string, { status: string; detail?: string }>;
    };
    expect(body.status).toBe('degraded');
    expect(body.checks['database'].status).toBe('up');
    expect(body.checks['identityProvider'].status).toBe('up');
    expect(body.checks['storage'].status).toBe('down');
    expect(body.checks['mail'].status).toBe('down');
    expect(body.checks['storage'].detail?.length).toBeGreaterThan(0);
    expect(body.checks['mail'].detail).toMatch(/ECONNREFUSED|connect/i);
  });
});

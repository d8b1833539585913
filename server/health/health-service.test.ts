import { describe, expect, it } from '@jest/globals';
import { HEALTH_ANSWER_REUSE_MS, HealthService } from './health-service.js';

function countingService(now: { ms: number }, storageDown = false) {
  const calls = { storage: 0 };
  const service = new HealthService(
    {
      database: () => undefined,
      storage: () => {
        calls.storage++;
        if (storageDown) throw new Error('connection refused');
      },
      identityProvider: () => undefined,
      mail: () => undefined,
    },
    'test',
    () => now.ms,
  );
  return { service, calls };
}

describe('HealthService', () => {
  it('answers concurrent and closely following callers from one probe of each service', async () => {
    const now = { ms: 0 };
    const { service, calls } = countingService(now);
    const answers = await Promise.all([service.check(), service.check(), service.check()]);
    now.ms = HEALTH_ANSWER_REUSE_MS - 1;
    await service.check();
    expect(calls.storage).toBe(1);
    expect(answers.map((answer) => answer.status)).toEqual(['ok', 'ok', 'ok']);
  });

  it('probes again once the answer is older than the reuse window', async () => {
    const now = { ms: 0 };
    const { service, calls } = countingService(now);
    await service.check();
    now.ms = HEALTH_ANSWER_REUSE_MS;
    await service.check();
    expect(calls.storage).toBe(2);
  });

  it('names the component that is down and why', async () => {
    const { service } = countingService({ ms: 0 }, true);
    const answer = await service.check();
    expect(answer.status).toBe('degraded');
    expect(answer.checks.storage).toMatchObject({ status: 'down', detail: 'connection refused' });
    expect(answer.checks.database.status).toBe('up');
  });
});

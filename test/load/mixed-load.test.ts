/**
 * The load suite's bounded variant in `npm test`: 100 simulated users of mixed roles against a
 * real server for a few seconds. Latency is a benchmark figure (`npm run load`, `npm run bench`)
 * and is not asserted here; a failed request or an answer other than 2xx is a fault.
 */
import { describe, expect, it } from '@jest/globals';
import { runLoadTest } from './load-test.js';

const SECONDS = Number(process.env['TIDEMARK_LOAD_TEST_SECONDS'] ?? 8);

describe('100 concurrent users of mixed roles', () => {
  it('get every answer, all 2xx, on every route they use', async () => {
    const report = await runLoadTest(SECONDS);
    expect(report.connections).toBe(100);
    expect(report.mixed.requests).toBeGreaterThan(0);
    expect({ errors: report.mixed.errors, non2xx: report.mixed.non2xx, unexpected: report.mixed.unexpected }).toEqual({
      errors: 0,
      non2xx: 0,
      unexpected: [],
    });
    expect(report.capacity.non2xx).toBe(0);
    // Each group of users (coordinators, readers, data manager, monitor) was served.
    expect(report.groups.length).toBeGreaterThanOrEqual(4);
    for (const group of report.groups) expect(group.requests).toBeGreaterThan(0);
  }, 240_000);
});

import type { HealthResponse } from '../../shared/contracts/health.js';

type Probe = () => Promise<void> | void;
type ComponentHealth = HealthResponse['checks']['database'];

const PROBE_TIMEOUT_MS = 3000;

async function probe(run: Probe): Promise<ComponentHealth> {
  const started = performance.now();
  let timer: NodeJS.Timeout | undefined;
  try {
    await Promise.race([
      Promise.resolve().then(run),
      new Promise((_, reject) => {
        timer = setTimeout(() => reject(new Error(`no answer within ${PROBE_TIMEOUT_MS} ms`)), PROBE_TIMEOUT_MS);
      }),
    ]);
    return { status: 'up', latencyMs: Math.round(performance.now() - started) };
  } catch (error) {
    const detail = error instanceof Error ? error.message || error.name : String(error);
    return { status: 'down', latencyMs: Math.round(performance.now() - started), detail };
  } finally {
    clearTimeout(timer);
  }
}

/**
 * How long one answer serves later callers. Each check opens connections to storage, the identity
 * provider and the mail relay; under load, probing per request made a healthy server look degraded.
 */
export const HEALTH_ANSWER_REUSE_MS = 2000;

/** Asks each service Tidemark depends on whether it answers. */
export class HealthService {
  private latest: { readonly at: number; readonly answer: Promise<HealthResponse> } | undefined;

  constructor(
    private readonly probes: { database: Probe; storage: Probe; identityProvider: Probe; mail: Probe },
    private readonly version: string,
    private readonly nowMs: () => number = () => performance.now(),
  ) {}

  /** The services' state; callers within {@link HEALTH_ANSWER_REUSE_MS} of a check (or during it) share its answer. */
  check(): Promise<HealthResponse> {
    const now = this.nowMs();
    if (this.latest && now - this.latest.at < HEALTH_ANSWER_REUSE_MS) return this.latest.answer;
    const answer = this.probeAll();
    this.latest = { at: now, answer };
    return answer;
  }

  private async probeAll(): Promise<HealthResponse> {
    const [database, storage, identityProvider, mail] = await Promise.all([
      probe(this.probes.database),
      probe(this.probes.storage),
      probe(this.probes.identityProvider),
      probe(this.probes.mail),
    ]);
    const checks = { database, storage, identityProvider, mail };
    const allUp = Object.values(checks).every((check) => check.status === 'up');
    return { status: allUp ? 'ok' : 'degraded', version: this.version, checks };
  }
}

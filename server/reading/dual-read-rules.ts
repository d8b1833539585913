import { createHash } from 'node:crypto';

/** How many independent reads a study asks for (studies.readDesign). */
export type ReadDesign = 'single' | 'dual-all' | 'dual-sample';

/** The study settings that decide whether a session is read twice. */
export interface DualReadPolicy {
  readonly readDesign: ReadDesign;
  /** Fraction (0..1) of sessions read twice under dual-sample. */
  readonly dualSampleFraction: number;
}

/** 2^52: the draw takes 52 bits of the hash, so every value is exact in a double. */
const DRAW_RANGE = 2 ** 52;

/**
 * The session's fixed draw in [0, 1) for the dual sample: the first 52 bits of
 * SHA-256("dual-sample:" + sessionId). Anyone can recompute it from the session id, so the
 * decision is stable across restarts and auditable without stored random state.
 */
export function dualSampleDraw(sessionId: string): number {
  const hex = createHash('sha256').update(`dual-sample:${sessionId}`).digest('hex').slice(0, 13);
  return Number.parseInt(hex, 16) / DRAW_RANGE;
}

/**
 * Whether a session needs two independent reads: never under `single`, always under `dual-all`,
 * and under `dual-sample` when the session's draw falls below the study's fraction (a fraction at
 * or below 0 samples nothing, at or above 1 samples every session).
 */
export function needsDualRead(policy: DualReadPolicy, sessionId: string): boolean {
  switch (policy.readDesign) {
    case 'single':
      return false;
    case 'dual-all':
      return true;
    case 'dual-sample':
      return dualSampleDraw(sessionId) < policy.dualSampleFraction;
  }
}

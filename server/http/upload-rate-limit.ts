import type { RequestHandler } from 'express';
import { ipKeyGenerator, rateLimit } from 'express-rate-limit';
import { AppError } from './app-error.js';

/**
 * At most `perMinute` session-file uploads a minute per signed-in user or token owner (per
 * address for a caller not yet known, whom the route refuses anyway), so one runaway script
 * or stolen session cannot fill storage. Mounted after authentication and before the route,
 * so the file is not read when the limit is reached. Above it: 429 with Retry-After.
 */
export function uploadRateLimit(perMinute: number): RequestHandler {
  return rateLimit({
    windowMs: 60_000,
    limit: perMinute,
    standardHeaders: 'draft-8',
    legacyHeaders: false,
    keyGenerator: (req) => (req.principal ? `user:${req.principal.user.id}` : `ip:${ipKeyGenerator(req.ip ?? '')}`),
    handler: (_req, _res, next) =>
      next(
        new AppError(
          429,
          'upload-rate-limited',
          `Too many files sent: at most ${perMinute} uploads a minute are accepted. Wait a minute, then send the rest.`,
        ),
      ),
  });
}

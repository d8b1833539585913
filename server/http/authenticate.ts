import type { RequestHandler } from 'express';
import { CSRF_HEADER } from '../../shared/contracts/auth.js';
import type { AuthService } from '../auth/auth-service.js';
import { AppError } from './app-error.js';

export const SESSION_COOKIE = 'tidemark_session';
const SAFE_METHODS = new Set(['GET', 'HEAD', 'OPTIONS']);

/**
 * Resolves the caller from a bearer token or the session cookie. A credential that
 * is present but bad is refused here; an absent one leaves the request anonymous,
 * and each route's access rule decides.
 */
export function authenticate(auth: AuthService): RequestHandler {
  return (req, res, next) => {
    const header = req.headers.authorization;
    if (header !== undefined) {
      const match = /^Bearer\s+(\S+)$/i.exec(header);
      if (!match) throw AppError.unauthenticated('The Authorization header must be "Bearer <token>".', 'token-invalid');
      req.principal = auth.resolveToken(match[1]);
      return next();
    }
    const cookieValue: unknown = req.cookies?.[SESSION_COOKIE];
    if (typeof cookieValue === 'string' && cookieValue !== '') {
      try {
        req.principal = auth.resolveSession(cookieValue);
      } catch (error) {
        // A dead cookie must not lock the browser out: the 401 deletes it, and sign-in itself goes on without it.
        res.clearCookie(SESSION_COOKIE, { path: '/', httpOnly: true, sameSite: 'lax' });
        if (req.path.startsWith('/auth/')) return next();
        throw error;
      }
    }
    next();
  };
}

/**
 * Cookie-authenticated writes must echo the session's CSRF token in a header, which a
 * page on another origin cannot read. Bearer requests carry no ambient credential.
 */
export const requireCsrfToken: RequestHandler = (req, _res, next) => {
  const session = req.principal?.session;
  if (SAFE_METHODS.has(req.method) || !session) return next();
  const sent = req.get(CSRF_HEADER);
  if (!sent) {
    throw AppError.forbidden(`This request is missing the ${CSRF_HEADER} header. Reload the page and try again.`, 'csrf-missing');
  }
  if (sent !== session.csrfToken) {
    throw AppError.forbidden('The CSRF token does not match your session. Reload the page and try again.', 'csrf-invalid');
  }
  next();
};

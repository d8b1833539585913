import express, { type Router } from 'express';
import { z } from 'zod';
import { meResponseSchema } from '../../shared/contracts/auth.js';
import {
  apiTokenSummarySchema,
  createApiTokenRequestSchema,
  createApiTokenResponseSchema,
} from '../../shared/contracts/tokens.js';
import { AppError } from '../http/app-error.js';
import type { ApiRouteRegistry } from '../http/api-route.js';
import { SESSION_COOKIE } from '../http/authenticate.js';
import type { AuthService } from './auth-service.js';
import type { OidcRelyingParty } from './oidc-relying-party.js';

const LOGIN_COOKIE = 'tidemark_login';
/** Set at sign-out so the next sign-in in this browser asks for the password again, even if the provider's own session lives on. */
const SIGNED_OUT_COOKIE = 'tidemark_signed_out';

/** Only same-site paths, so a crafted link cannot bounce a fresh session to another host. */
function safeReturnPath(value: unknown): string {
  return typeof value === 'string' && /^\/(?![/\\])[^\\]*$/.test(value) ? value : '/';
}

export function authRoutes(deps: {
  registry: ApiRouteRegistry;
  auth: AuthService;
  relyingParty: OidcRelyingParty;
  publicUrl: string;
  secureCookies: boolean;
}): Router {
  const { registry, auth, relyingParty, publicUrl, secureCookies } = deps;
  const router = express.Router();
  const cookieBase = { httpOnly: true, sameSite: 'lax' as const, secure: secureCookies, path: '/' };

  registry.add(router, {
    method: 'get',
    path: '/auth/login',
    tag: 'auth',
    summary: 'Start signing in through the identity provider (redirect)',
    access: { kind: 'public' },
    query: z.object({ returnTo: z.string().optional() }),
    successStatus: 303,
    responseDescription: 'Redirect to the identity provider',
    handler: async ({ req, res, query }) => {
      const signIn = await relyingParty.beginSignIn({ forceLogin: req.cookies?.[SIGNED_OUT_COOKIE] === '1' });
      res.clearCookie(SIGNED_OUT_COOKIE, cookieBase);
      auth.recordLoginAttempt({
        state: signIn.state,
        codeVerifier: signIn.codeVerifier,
        nonce: signIn.nonce,
        returnTo: safeReturnPath(query.returnTo),
      });
      res.cookie(LOGIN_COOKIE, signIn.state, { ...cookieBase, maxAge: 10 * 60 * 1000 });
      res.redirect(303, signIn.url);
    },
  });

  registry.add(router, {
    method: 'get',
    path: '/auth/callback',
    tag: 'auth',
    summary: 'Return from the identity provider; opens a session (redirect)',
    access: { kind: 'public' },
    query: z.object({ state: z.string().optional(), code: z.string().optional(), error: z.string().optional() }),
    successStatus: 303,
    responseDescription: 'Redirect into the app, or to the sign-in page with the reason',
    handler: async ({ req, res, query }) => {
      // Only the code travels in the URL: the page words it, so a crafted link cannot put text on our page.
      const toSignIn = (code: string, message: string) => {
        req.log?.info({ code }, message);
        res.redirect(303, `/sign-in?error=${encodeURIComponent(code)}`);
      };
      res.clearCookie(LOGIN_COOKIE, cookieBase);
      if (query.error) return toSignIn('idp-refused', `The identity provider did not sign you in (${query.error}).`);
      if (!query.state || query.state !== req.cookies?.[LOGIN_COOKIE]) {
        return toSignIn('login-mismatch', 'This sign-in did not start in this browser. Start signing in again.');
      }
      try {
        const attempt = auth.takeLoginAttempt(query.state);
        const result = await relyingParty.completeSignIn(new URL(req.originalUrl, publicUrl), attempt);
        if (!result.email) return toSignIn('no-email', 'The identity provider did not share your e-mail address.');
        const previous: unknown = req.cookies?.[SESSION_COOKIE];
        const session = auth.openSession(result.email, result.authTime);
        if (typeof previous === 'string') auth.endSessionByCookie(previous);
        res.cookie(SESSION_COOKIE, session.cookieValue, cookieBase);
        res.redirect(303, attempt.returnTo);
      } catch (error) {
        if (error instanceof AppError) return toSignIn(error.code, error.message);
        req.log?.warn({ err: error }, 'sign-in failed');
        return toSignIn('login-failed', 'Signing in failed. Start signing in again.');
      }
    },
  });

  registry.add(router, {
    method: 'post',
    path: '/auth/logout',
    tag: 'auth',
    summary: 'Sign out: ends the session',
    access: { kind: 'signed-in' },
    handler: ({ res, principal }) => {
      if (principal?.session) auth.endSession(principal.session.idHash);
      res.clearCookie(SESSION_COOKIE, cookieBase);
      res.cookie(SIGNED_OUT_COOKIE, '1', { ...cookieBase, maxAge: 30 * 24 * 3600_000 });
    },
  });

  registry.add(router, {
    method: 'get',
    path: '/api/me',
    tag: 'auth',
    summary: 'The signed-in user, their role assignments and the CSRF token for writes',
    access: { kind: 'signed-in' },
    response: meResponseSchema,
    handler: ({ principal }) => ({
      user: principal!.user,
      assignments: [...principal!.assignments],
      csrfToken: principal!.session?.csrfToken ?? '',
    }),
  });

  registry.add(router, {
    method: 'get',
    path: '/api/me/tokens',
    tag: 'auth',
    summary: 'Your API tokens (never their values)',
    access: { kind: 'signed-in' },
    response: z.array(apiTokenSummarySchema),
    handler: ({ principal }) => auth.listTokens(principal!.user.id),
  });

  registry.add(router, {
    method: 'post',
    path: '/api/me/tokens',
    tag: 'auth',
    summary: 'Create an API token for automation acting as you; the value is shown once',
    access: { kind: 'signed-in' },
    body: createApiTokenRequestSchema,
    response: createApiTokenResponseSchema,
    successStatus: 201,
    handler: ({ principal, body }) => auth.issueToken(principal!.user.email, body.label),
  });

  registry.add(router, {
    method: 'delete',
    path: '/api/me/tokens/:tokenId',
    tag: 'auth',
    summary: 'Revoke one of your API tokens',
    access: { kind: 'signed-in' },
    params: z.object({ tokenId: z.string() }),
    handler: ({ principal, params }) => auth.revokeToken(principal!.user.id, params.tokenId),
  });

  return router;
}

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
/** Holds the state of a re-authentication in flight, so the callback refreshes the session instead of opening one. */
const REAUTH_COOKIE = 'tidemark_reauth';

/** Only same-site paths, so a crafted link cannot bounce a fresh session to another host. */
function safeReturnPath(value: unknown): string {
  return typeof value === 'string' && /^\/(?![/\\])[^\\]*$/.test(value) ? value : '/';
}

/** The return path with `reauthentication=<outcome>` added, so the page that asked can say what happened. */
function withReauthenticationOutcome(returnTo: string, outcome: string): string {
  const url = new URL(returnTo, 'http://return.invalid');
  url.searchParams.set('reauthentication', outcome);
  return `${url.pathname}${url.search}${url.hash}`;
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
    path: '/auth/reauthenticate',
    tag: 'auth',
    summary:
      'Confirm your identity before signing (21 CFR 11.200): a forced fresh login at the identity provider; ' +
      "the callback refreshes this session's auth time and returns to returnTo (redirect)",
    access: { kind: 'signed-in' },
    query: z.object({ returnTo: z.string().optional() }),
    successStatus: 303,
    responseDescription: 'Redirect to the identity provider, which asks for the password again',
    handler: async ({ res, query, principal }) => {
      if (!principal?.session) {
        throw AppError.forbidden('Only a browser session can confirm identity for signing; API tokens cannot sign.', 'session-required');
      }
      const signIn = await relyingParty.beginSignIn({ forceLogin: true });
      auth.recordLoginAttempt({
        state: signIn.state,
        codeVerifier: signIn.codeVerifier,
        nonce: signIn.nonce,
        returnTo: safeReturnPath(query.returnTo),
      });
      res.cookie(LOGIN_COOKIE, signIn.state, { ...cookieBase, maxAge: 10 * 60 * 1000 });
      res.cookie(REAUTH_COOKIE, signIn.state, { ...cookieBase, maxAge: 10 * 60 * 1000 });
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
      const reauthenticating =
        query.state !== undefined && req.cookies?.[REAUTH_COOKIE] === query.state && req.principal?.session !== undefined;
      res.clearCookie(LOGIN_COOKIE, cookieBase);
      res.clearCookie(REAUTH_COOKIE, cookieBase);
      if (reauthenticating) {
        // The user stays signed in whatever happens: every outcome goes back to the page that asked.
        let returnTo = '/';
        try {
          const attempt = auth.takeLoginAttempt(query.state!);
          returnTo = attempt.returnTo;
          if (query.error) throw AppError.unauthenticated(`The identity provider did not confirm you (${query.error}).`, 'idp-refused');
          const result = await relyingParty.completeSignIn(new URL(req.originalUrl, publicUrl), attempt);
          if (!result.email) throw AppError.unauthenticated('The identity provider did not share your e-mail address.', 'no-email');
          auth.refreshAuthTime(req.principal!, result.email, result.authTime);
          return res.redirect(303, withReauthenticationOutcome(returnTo, 'confirmed'));
        } catch (error) {
          const code = error instanceof AppError ? error.code : 'reauthentication-failed';
          if (error instanceof AppError) req.log?.info({ code }, error.message);
          else req.log?.warn({ err: error }, 're-authentication failed');
          return res.redirect(303, withReauthenticationOutcome(returnTo, code));
        }
      }
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

import { DOCUMENT } from '@angular/common';
import { HttpInterceptorFn } from '@angular/common/http';
import { inject } from '@angular/core';

import { CSRF_HEADER } from '@shared/contracts/auth';
import { AuthSession } from './auth-session';

/** Methods that change nothing on the server (RFC 9110 §9.2.1), so they carry no token. */
const SAFE_METHODS: ReadonlySet<string> = new Set(['GET', 'HEAD', 'OPTIONS', 'TRACE']);

/**
 * Adds the session's CSRF token to state-changing requests sent to our own origin. The token is
 * never sent to other hosts, so a third-party URL cannot harvest it.
 */
export const csrfInterceptor: HttpInterceptorFn = (request, next) => {
  if (SAFE_METHODS.has(request.method.toUpperCase())) return next(request);
  const document = inject(DOCUMENT);
  if (!isSameOrigin(request.url, document.baseURI)) return next(request);
  const token = inject(AuthSession).csrfToken();
  return next(token ? request.clone({ setHeaders: { [CSRF_HEADER]: token } }) : request);
};

function isSameOrigin(url: string, baseUri: string): boolean {
  const base = new URL(baseUri);
  return new URL(url, base).origin === base.origin;
}

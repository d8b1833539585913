import { HttpErrorResponse, HttpInterceptorFn } from '@angular/common/http';
import { inject } from '@angular/core';
import { Router } from '@angular/router';
import { catchError, throwError } from 'rxjs';

/**
 * A 401 in the middle of work means the session ended (idle expiry, sign-out elsewhere):
 * take the user to sign in and bring them back to the page they were on. `/api/me` is
 * left alone, since there a 401 is the ordinary answer for a visitor, and so is a signing
 * route's `reauthentication-required`: the session is alive, the signer must confirm who they are.
 */
export const sessionExpiryInterceptor: HttpInterceptorFn = (request, next) => {
  const router = inject(Router);
  return next(request).pipe(
    catchError((error: unknown) => {
      if (
        error instanceof HttpErrorResponse &&
        error.status === 401 &&
        !request.url.endsWith('/api/me') &&
        errorCode(error) !== 'reauthentication-required'
      ) {
        const returnTo = router.url.startsWith('/sign-in') ? '/' : router.url;
        void router.navigate(['/sign-in'], { queryParams: { returnTo, error: 'session-expired' } });
      }
      return throwError(() => error);
    }),
  );
};

function errorCode(error: HttpErrorResponse): string | undefined {
  const body: unknown = error.error;
  if (typeof body !== 'object' || body === null || !('error' in body)) return undefined;
  const inner: unknown = body.error;
  return typeof inner === 'object' && inner !== null && 'code' in inner && typeof inner.code === 'string' ? inner.code : undefined;
}

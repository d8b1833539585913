import { HttpErrorResponse, HttpInterceptorFn } from '@angular/common/http';
import { catchError, throwError } from 'rxjs';

import { errorResponseSchema } from '@shared/contracts/auth';
import { ApiError } from './api-error';

/** Header the server sets on every response so a message can quote it. */
const REQUEST_ID_HEADER = 'x-request-id';

/**
 * Replaces every `HttpErrorResponse` with an {@link ApiError} whose message a site coordinator
 * can act on; call sites catch `ApiError` and show `message`.
 */
export const errorInterceptor: HttpInterceptorFn = (request, next) =>
  next(request).pipe(
    catchError((error: unknown) =>
      throwError(() => (error instanceof HttpErrorResponse ? toApiError(error) : error)),
    ),
  );

/** Maps an HTTP failure to an {@link ApiError}, preferring the server's own `{ error }` body. */
export function toApiError(response: HttpErrorResponse): ApiError {
  const headerRequestId = response.headers?.get(REQUEST_ID_HEADER) ?? undefined;
  const parsed = errorResponseSchema.safeParse(readBody(response.error));
  if (parsed.success) {
    const { code, message, requestId, details } = parsed.data.error;
    return new ApiError(response.status, code, message, requestId ?? headerRequestId, details);
  }
  return new ApiError(
    response.status,
    codeForStatus(response.status),
    messageForStatus(response.status),
    headerRequestId,
  );
}

/** Bodies of `responseType: 'text'` requests arrive as strings; JSON ones already parsed. */
function readBody(body: unknown): unknown {
  if (typeof body !== 'string') return body;
  try {
    return JSON.parse(body);
  } catch {
    // SyntaxError: not our JSON error body (an HTML error page from a proxy, say).
    return undefined;
  }
}

function codeForStatus(status: number): string {
  if (status === 0) return 'network';
  if (status >= 500) return 'server';
  return `http-${status}`;
}

function messageForStatus(status: number): string {
  switch (status) {
    case 0:
      return 'Tidemark could not reach the server. Check your connection and try again.';
    case 401:
      return 'Your session has ended. Sign in again to continue.';
    case 403:
      return 'Your role does not allow this. Ask your study admin if you need access.';
    case 404:
      return 'This item could not be found. It may have been moved or removed.';
    case 409:
      return 'This record changed or is locked, so the change was not saved. Reload and check it.';
    case 413:
      return 'The file is too large to upload.';
    case 429:
      return 'Too many requests in a short time. Wait a moment and try again.';
    default:
      return status >= 500
        ? 'Tidemark had a problem on the server. Try again; if it keeps happening, contact support.'
        : 'The request could not be completed. Check what you entered and try again.';
  }
}

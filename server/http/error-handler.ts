import type { ErrorRequestHandler, RequestHandler } from 'express';
import { AppError } from './app-error.js';
import type { ErrorResponse } from '../../shared/contracts/auth.js';

/** Unknown API paths answer 404 in the API's error shape instead of falling through to the web app. */
export const apiNotFound: RequestHandler = (req, _res, next) => {
  next(AppError.notFound(`There is no API route ${req.method} ${req.originalUrl.split('?')[0]}.`));
};

/**
 * The one error middleware: expected errors become their status and message;
 * anything else is logged once with the request id and answered without internals.
 */
export const errorHandler: ErrorRequestHandler = (error: unknown, req, res, _next) => {
  const requestId = String(req.id ?? '');
  let status = 500;
  let body: ErrorResponse['error'];
  if (error instanceof AppError) {
    status = error.status;
    body = { code: error.code, message: error.message, requestId, details: error.details };
  } else if (isBodyParserError(error)) {
    status = error.status;
    body = {
      code: error.type === 'entity.too.large' ? 'payload-too-large' : 'malformed-body',
      message:
        error.type === 'entity.too.large'
          ? 'The request body is larger than this route accepts.'
          : 'The request body could not be read as JSON.',
      requestId,
    };
  } else {
    req.log?.error({ err: error }, 'unexpected error');
    body = {
      code: 'internal',
      message: `Something went wrong on the server. Quote request id ${requestId} when reporting it.`,
      requestId,
    };
  }
  if (status >= 400 && status < 500) req.log?.info({ code: body.code, status }, body.message);
  res.status(status).json({ error: body } satisfies ErrorResponse);
};

function isBodyParserError(error: unknown): error is { status: number; type: string } {
  return (
    typeof error === 'object' &&
    error !== null &&
    'type' in error &&
    'status' in error &&
    typeof (error as { status: unknown }).status === 'number'
  );
}

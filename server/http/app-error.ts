/** An expected failure with the HTTP status and a message written for the person using the app. */
export class AppError extends Error {
  constructor(
    readonly status: number,
    /** Stable code a client can branch on, e.g. `forbidden`, `csrf-invalid`. */
    readonly code: string,
    message: string,
    readonly details?: unknown,
  ) {
    super(message);
    this.name = 'AppError';
  }

  static badRequest(message: string, details?: unknown, code = 'bad-request'): AppError {
    return new AppError(400, code, message, details);
  }
  static unauthenticated(message = 'Sign in to continue.', code = 'unauthenticated'): AppError {
    return new AppError(401, code, message);
  }
  static forbidden(message: string, code = 'forbidden'): AppError {
    return new AppError(403, code, message);
  }
  static notFound(message: string): AppError {
    return new AppError(404, 'not-found', message);
  }
  static conflict(message: string, details?: unknown, code = 'conflict'): AppError {
    return new AppError(409, code, message, details);
  }
}

/**
 * An HTTP failure turned into words for the person using the app. `message` is shown as is;
 * `requestId` lets support find the server log line.
 */
export class ApiError extends Error {
  override readonly name = 'ApiError';

  constructor(
    /** HTTP status; 0 when the server could not be reached. */
    readonly status: number,
    /** Machine-readable code from the server, or one derived from the status. */
    readonly code: string,
    message: string,
    readonly requestId?: string,
    readonly details?: unknown,
  ) {
    super(message);
  }
}

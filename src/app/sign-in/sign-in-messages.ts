/** Words for the `?error=` codes the sign-in round trip can come back with. */
const MESSAGES: Readonly<Record<string, string>> = {
  // OAuth 2.0 error codes (RFC 6749 §4.1.2.1) and OpenID Connect's (Core 1.0 §3.1.2.6).
  access_denied: 'Sign-in was cancelled or refused. You can try again.',
  login_required: 'Please sign in to continue.',
  interaction_required: 'Please sign in to continue.',
  server_error: 'The sign-in service had a problem. Try again in a moment.',
  temporarily_unavailable: 'The sign-in service is busy. Try again in a moment.',
  // Set by this app.
  'session-unavailable':
    'Tidemark could not check your session because the server did not answer. Try again in a moment.',
  'session-expired': 'Your session has ended. Sign in again to continue.',
};

/** The message to show for a sign-in error code, or null when there is none. */
export function signInErrorMessage(code: string | null | undefined): string | null {
  if (!code) return null;
  return (
    MESSAGES[code] ??
    'Sign-in did not complete. Try again; if it keeps failing, contact your study admin.'
  );
}

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
  // Set by the server's sign-in callback.
  'login-mismatch': 'This sign-in did not start in this browser. Start signing in again.',
  'login-expired': 'This sign-in link has expired or was already used. Start signing in again.',
  'idp-refused': 'The sign-in service did not sign you in. You can try again.',
  'no-account':
    'Your account has no access to Tidemark. Ask your study admin for an invitation.',
  'account-inactive': 'Your Tidemark account is deactivated. Ask your study admin.',
  'no-email': 'The sign-in service did not share your e-mail address, which Tidemark needs.',
  'login-failed': 'Signing in failed. Start signing in again.',
};

/** The message to show for a sign-in error code, or null when there is none. */
export function signInErrorMessage(code: string | null | undefined): string | null {
  if (!code) return null;
  return (
    MESSAGES[code] ??
    'Sign-in did not complete. Try again; if it keeps failing, contact your study admin.'
  );
}

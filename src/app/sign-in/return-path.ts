/**
 * The in-app path to come back to after signing in, or `/` when `candidate` is missing or could
 * lead elsewhere: only a single-slash absolute path is kept, so `//host`, `/\host`, `https:`
 * and `javascript:` values cannot turn the sign-in round trip into an open redirect.
 */
export function safeReturnPath(candidate: string | null | undefined): string {
  if (!candidate || !candidate.startsWith('/')) return '/';
  if (candidate.startsWith('//') || candidate.startsWith('/\\')) return '/';
  // Control characters (tab, newline) are stripped by URL parsers and can rebuild `//`.
  if ([...candidate].some(isControlCharacter)) return '/';
  if (candidate === '/sign-in' || candidate.startsWith('/sign-in?') || candidate.startsWith('/sign-in/')) {
    return '/';
  }
  return candidate;
}

/** The server route that starts the sign-in round trip and returns to `returnTo` afterwards. */
export function loginUrl(returnTo: string | null | undefined): string {
  return `/auth/login?returnTo=${encodeURIComponent(safeReturnPath(returnTo))}`;
}

function isControlCharacter(character: string): boolean {
  const code = character.charCodeAt(0);
  return code < 0x20 || code === 0x7f;
}

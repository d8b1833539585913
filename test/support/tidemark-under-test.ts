import fs from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { pino } from 'pino';
import { loadConfig } from '../../server/config.js';
import { startTidemark, type RunningTidemark } from '../../server/runtime.js';
import { DEMO_PASSWORD } from '../../server/seed/demo-study.js';

// The AWS SDK version is pinned, so its notice about future Node requirements is noise here.
process.env['AWS_SDK_JS_NODE_VERSION_SUPPORT_WARNING_DISABLED'] ??= 'true';

/**
 * Settings of a throw-away instance: its own data folder, no web client, no log, and every port
 * (the app's and its local fakes') chosen by the OS.
 */
export function throwAwayInstanceEnv(dataDir: string): Record<string, string> {
  return {
    PORT: '0',
    TIDEMARK_DATA_DIR: dataDir,
    TIDEMARK_FAKE_S3_PORT: '0',
    TIDEMARK_FAKE_IDP_PORT: '0',
    TIDEMARK_FAKE_SMTP_PORT: '0',
    TIDEMARK_WEB_DIR: path.join(dataDir, 'no-web-client'),
    LOG_LEVEL: 'silent',
  };
}

/** Starts the real app with real local fakes on loopback ports chosen by the OS, in a throw-away data folder. */
export async function startTidemarkForTest(
  env: Record<string, string> = {},
  options: { clock?: () => Date; dataDir?: string; keepData?: boolean } = {},
): Promise<RunningTidemark & { dataDir: string }> {
  const dataDir = options.dataDir ?? fs.mkdtempSync(path.join(os.tmpdir(), 'tidemark-test-'));
  const config = loadConfig({ ...throwAwayInstanceEnv(dataDir), ...env });
  const running = await startTidemark(config, { logger: pino({ level: 'silent' }), clock: options.clock });
  return {
    ...running,
    dataDir,
    close: async () => {
      await running.close();
      if (!options.keepData) fs.rmSync(dataDir, { recursive: true, force: true });
    },
  };
}

/** A browser-like client: keeps cookies per origin and never follows redirects by itself. */
export class CookieClient {
  private readonly jar = new Map<string, Map<string, string>>();

  cookie(origin: string, name: string): string | undefined {
    return this.jar.get(origin)?.get(name);
  }

  setCookie(origin: string, name: string, value: string): void {
    const cookies = this.jar.get(origin) ?? new Map<string, string>();
    cookies.set(name, value);
    this.jar.set(origin, cookies);
  }

  async fetch(url: string, init: RequestInit = {}): Promise<Response> {
    const origin = new URL(url).origin;
    const cookies = this.jar.get(origin);
    const headers = new Headers(init.headers);
    if (cookies?.size) headers.set('cookie', [...cookies].map(([k, v]) => `${k}=${v}`).join('; '));
    const response = await fetch(url, { ...init, headers, redirect: 'manual' });
    for (const line of response.headers.getSetCookie()) {
      const [pair, ...attributes] = line.split(';');
      const index = pair.indexOf('=');
      const name = pair.slice(0, index).trim();
      const value = pair.slice(index + 1).trim();
      const expired = attributes.some((a) => /expires=Thu, 01 Jan 1970/i.test(a)) || value === '';
      const jar = this.jar.get(origin) ?? new Map<string, string>();
      if (expired) jar.delete(name);
      else jar.set(name, value);
      this.jar.set(origin, jar);
    }
    return response;
  }
}

/** Signs in through the identity provider's real login form, as a browser would. Returns the client and the CSRF token. */
export async function signIn(appUrl: string, email: string, password = DEMO_PASSWORD) {
  const client = new CookieClient();
  let response = await client.fetch(`${appUrl}/auth/login?returnTo=/site-desk`);
  let location = response.headers.get('location')!;
  for (let hop = 0; hop < 10; hop++) {
    if (location.startsWith(appUrl) && location.includes('/auth/callback')) break;
    if (location.includes('/interaction/')) {
      const interactionUrl = new URL(location, location.startsWith('http') ? undefined : new URL(response.url).origin);
      await client.fetch(interactionUrl.href);
      response = await client.fetch(`${interactionUrl.href}/login`, {
        method: 'POST',
        headers: { 'content-type': 'application/x-www-form-urlencoded' },
        body: new URLSearchParams({ email, password }).toString(),
      });
      if (response.status === 401) throw new Error(`The identity provider refused ${email}`);
    } else {
      response = await client.fetch(location);
    }
    const next = response.headers.get('location');
    if (!next) throw new Error(`Sign-in stopped at ${response.url} with status ${response.status}`);
    location = new URL(next, response.url).href;
  }
  const callback = await client.fetch(location);
  const me = await client.fetch(`${appUrl}/api/me`);
  const body = me.status === 200 ? ((await me.json()) as { csrfToken: string }) : undefined;
  return { client, callback, csrfToken: body?.csrfToken ?? '' };
}

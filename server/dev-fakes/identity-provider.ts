import { generateKeyPairSync } from 'node:crypto';
import http from 'node:http';
import type { AddressInfo } from 'node:net';
import express from 'express';
import Provider, { type KoaContextWithOIDC } from 'oidc-provider';
import { memoryAdapterFactory } from './memory-adapter.js';

/** An account the local identity provider knows. Passwords exist only in this fake. */
export interface FakeAccount {
  readonly email: string;
  readonly name: string;
  readonly password: string;
}

export interface FakeIdentityProvider {
  readonly issuer: string;
  close(): Promise<void>;
}

function escapeHtml(value: string): string {
  return value.replace(/[&<>"']/g, (c) => `&#${c.charCodeAt(0)};`);
}

function loginPage(uid: string, accounts: readonly FakeAccount[], error?: string): string {
  const options = accounts.map((a) => `<li><code>${escapeHtml(a.email)}</code> (${escapeHtml(a.name)})</li>`).join('');
  return `<!doctype html><html lang="en"><head><meta charset="utf-8"><title>Local identity provider</title>
<style>body{font:16px system-ui,sans-serif;max-width:36rem;margin:3rem auto;padding:0 1rem;color:#12343b}
label{display:block;margin:.8rem 0 .2rem}input{width:100%;padding:.5rem;font-size:1rem}
button{margin-top:1rem;padding:.6rem 1.4rem;font-size:1rem}.error{color:#a3261a}small{color:#555}</style></head>
<body><h1>Local identity provider</h1><p><small>A stand-in for your organisation's sign-in service, for development and demos only.</small></p>
${error ? `<p class="error" role="alert">${escapeHtml(error)}</p>` : ''}
<form method="post" action="/interaction/${encodeURIComponent(uid)}/login">
<label for="email">E-mail</label><input id="email" name="email" type="email" autocomplete="username" required autofocus>
<label for="password">Password</label><input id="password" name="password" type="password" autocomplete="current-password" required>
<button type="submit">Sign in</button></form>
<h2>Demo accounts</h2><p><small>Password for every demo account: <code>${escapeHtml(accounts[0]?.password ?? '')}</code></small></p><ul>${options}</ul></body></html>`;
}

/**
 * Starts an OpenID Connect provider on loopback (oidc-provider) that knows the given
 * accounts, asks for no consent and supports a forced fresh login (`prompt=login`).
 */
export async function startFakeIdentityProvider(options: {
  port: number;
  accounts: readonly FakeAccount[];
  /** Further accounts looked up at sign-in (people invited after start), with the same local password. */
  lookupAccount?: (email: string) => FakeAccount | undefined;
  client: { clientId: string; clientSecret: string; redirectUris: string[] };
}): Promise<FakeIdentityProvider> {
  const server = http.createServer();
  await new Promise<void>((resolve) => server.listen(options.port, '127.0.0.1', resolve));
  const issuer = `http://127.0.0.1:${(server.address() as AddressInfo).port}`;
  const seeded = new Map(options.accounts.map((account) => [account.email.toLowerCase(), account]));
  const byEmail = { get: (email: string) => seeded.get(email) ?? options.lookupAccount?.(email) };
  const { privateKey } = generateKeyPairSync('rsa', { modulusLength: 2048 });

  const provider = new Provider(issuer, {
    adapter: memoryAdapterFactory(),
    clients: [
      {
        client_id: options.client.clientId,
        client_secret: options.client.clientSecret,
        redirect_uris: options.client.redirectUris,
        grant_types: ['authorization_code'],
        response_types: ['code'],
        require_auth_time: true,
      },
    ],
    jwks: { keys: [{ ...privateKey.export({ format: 'jwk' }), kid: 'fake-signing-key', use: 'sig', alg: 'RS256' }] },
    cookies: { keys: ['local-fake-identity-provider'] },
    claims: { openid: ['sub'], email: ['email', 'email_verified'], profile: ['name'] },
    features: { devInteractions: { enabled: false } },
    pkce: { required: () => true },
    ttl: { AccessToken: 600, AuthorizationCode: 60, IdToken: 600, Interaction: 600, Session: 3600, Grant: 3600 },
    interactions: { url: (_ctx, interaction) => `/interaction/${interaction.uid}` },
    findAccount: (_ctx, id) => {
      const account = byEmail.get(id);
      if (!account) return undefined;
      return {
        accountId: id,
        claims: () => ({ sub: id, email: account.email, email_verified: true, name: account.name }),
      };
    },
    // No consent screen: the fake stands in for an organisation's own provider.
    async loadExistingGrant(ctx: KoaContextWithOIDC) {
      const grantId = ctx.oidc.result?.consent?.grantId ?? ctx.oidc.session!.grantIdFor(ctx.oidc.client!.clientId);
      if (grantId) {
        const existing = await ctx.oidc.provider.Grant.find(grantId);
        if (existing) return existing;
      }
      const grant = new ctx.oidc.provider.Grant({ clientId: ctx.oidc.client!.clientId, accountId: ctx.oidc.session!.accountId! });
      grant.addOIDCScope('openid email profile');
      await grant.save();
      return grant;
    },
  });

  const app = express();
  app.get('/interaction/:uid', async (req, res, next) => {
    try {
      const details = await provider.interactionDetails(req, res);
      res.type('html').send(loginPage(details.uid, options.accounts));
    } catch (error) {
      next(error);
    }
  });
  app.post('/interaction/:uid/login', express.urlencoded({ extended: false }), async (req, res, next) => {
    try {
      const details = await provider.interactionDetails(req, res);
      const email = String(req.body?.email ?? '').trim().toLowerCase();
      const account = byEmail.get(email);
      if (!account || account.password !== req.body?.password) {
        res.status(401).type('html').send(loginPage(details.uid, options.accounts, 'Unknown e-mail or wrong password.'));
        return;
      }
      await provider.interactionFinished(req, res, { login: { accountId: email } }, { mergeWithLastSubmission: false });
    } catch (error) {
      next(error);
    }
  });
  app.use(provider.callback());
  server.on('request', app);

  return {
    issuer,
    close: () =>
      new Promise<void>((resolve) => {
        server.closeAllConnections();
        server.close(() => resolve());
      }),
  };
}

import * as oidc from 'openid-client';
import type { AppConfig } from '../config.js';

/**
 * The OpenID Connect client side: discovery once (retried after a failure),
 * authorization-code flow with PKCE, userinfo. Works with any compliant provider.
 */
export class OidcRelyingParty {
  private configuration: Promise<oidc.Configuration> | undefined;

  constructor(
    private readonly settings: AppConfig['identity'] & { issuer: string },
    private readonly redirectUri: string,
  ) {}

  get issuer(): string {
    return this.settings.issuer;
  }

  private discover(): Promise<oidc.Configuration> {
    this.configuration ??= oidc
      .discovery(
        new URL(this.settings.issuer),
        this.settings.clientId,
        this.settings.clientSecret,
        undefined,
        // Plain http is only for a provider on loopback (the local fake).
        this.settings.issuer.startsWith('http://') ? { execute: [oidc.allowInsecureRequests] } : undefined,
      )
      .catch((error: unknown) => {
        this.configuration = undefined;
        throw error;
      });
    return this.configuration;
  }

  async ping(): Promise<void> {
    await this.discover();
  }

  /** Starts a sign-in: the URL to send the browser to, and the secrets to keep until the callback. */
  async beginSignIn(options: { forceLogin?: boolean } = {}) {
    const config = await this.discover();
    const codeVerifier = oidc.randomPKCECodeVerifier();
    const state = oidc.randomState();
    const nonce = oidc.randomNonce();
    const url = oidc.buildAuthorizationUrl(config, {
      redirect_uri: this.redirectUri,
      scope: 'openid email profile',
      code_challenge: await oidc.calculatePKCECodeChallenge(codeVerifier),
      code_challenge_method: 'S256',
      state,
      nonce,
      ...(options.forceLogin ? { prompt: 'login', max_age: '0' } : {}),
    });
    return { url: url.href, codeVerifier, state, nonce };
  }

  /** Finishes a sign-in from the callback URL; returns the verified e-mail, name and auth time. */
  async completeSignIn(callbackUrl: URL, expected: { codeVerifier: string; state: string; nonce: string }) {
    const config = await this.discover();
    const tokens = await oidc.authorizationCodeGrant(config, callbackUrl, {
      pkceCodeVerifier: expected.codeVerifier,
      expectedState: expected.state,
      expectedNonce: expected.nonce,
    });
    const claims = tokens.claims();
    if (!claims) throw new Error('The identity provider returned no ID token');
    const userInfo = await oidc.fetchUserInfo(config, tokens.access_token, claims.sub);
    const email = typeof userInfo.email === 'string' ? userInfo.email : undefined;
    const authTime = typeof claims.auth_time === 'number' ? new Date(claims.auth_time * 1000) : new Date();
    return { email, name: typeof userInfo.name === 'string' ? userInfo.name : undefined, authTime };
  }
}

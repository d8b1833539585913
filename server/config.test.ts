import { describe, expect, it } from '@jest/globals';
import path from 'node:path';
import { loadConfig } from './config.js';

describe('loadConfig', () => {
  it('needs no settings: every service defaults to its local fake', () => {
    const config = loadConfig({});
    expect(config.port).toBe(4300);
    expect(config.publicUrl).toBe('http://127.0.0.1:4300');
    expect(config.databaseFile).toBe(path.resolve('data/tidemark.sqlite'));
    expect(config.storage.endpoint).toBeUndefined();
    expect(config.identity.issuer).toBeUndefined();
    expect(config.mail.smtpUrl).toBeUndefined();
    expect(config.session.secureCookies).toBe(false);
  });

  it('switches to real services and secure cookies by configuration alone', () => {
    const config = loadConfig({
      PUBLIC_URL: 'https://tidemark.example/',
      TIDEMARK_S3_ENDPOINT: 'https://objects.example',
      TIDEMARK_OIDC_ISSUER: 'https://login.example/realm',
      TIDEMARK_SMTP_URL: 'smtps://relay.example:465',
    });
    expect(config.publicUrl).toBe('https://tidemark.example');
    expect(config.storage.endpoint).toBe('https://objects.example');
    expect(config.identity.issuer).toBe('https://login.example/realm');
    expect(config.mail.smtpUrl).toBe('smtps://relay.example:465');
    expect(config.session.secureCookies).toBe(true);
  });

  it('refuses a bad value and names the variable', () => {
    expect(() => loadConfig({ PORT: 'eighty' })).toThrow(/PORT/);
    expect(() => loadConfig({ TIDEMARK_OIDC_ISSUER: 'not a url' })).toThrow(/TIDEMARK_OIDC_ISSUER/);
    expect(() => loadConfig({ TIDEMARK_SEED_DEMO: 'maybe' })).toThrow(/TIDEMARK_SEED_DEMO/);
  });
});

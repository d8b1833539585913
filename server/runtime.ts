import http from 'node:http';
import type { AddressInfo } from 'node:net';
import path from 'node:path';
import type { Express } from 'express';
import { pino, type Logger } from 'pino';
import type { StorageFake } from '../storage-fake/s3-fake.js';
import { createApp, type AppDependencies, type AppServices } from './app.js';
import { OidcRelyingParty } from './auth/oidc-relying-party.js';
import type { AppConfig } from './config.js';
import { openDatabase } from './db/database.js';
import type { FakeIdentityProvider } from './dev-fakes/identity-provider.js';
import type { MailCatcher } from './dev-fakes/mail-catcher.js';
import { Mailer } from './mail/mailer.js';
import { seedDemoSessions, seedDemoStudy } from './seed/demo-seed.js';
import { DEMO_PASSWORD, DEMO_USERS } from './seed/demo-study.js';
import { ObjectStorage } from './storage/object-storage.js';
import { UserRepository } from './users/user-repository.js';
import type { UploadFaultHooks } from './uploads/upload-service.js';

/** A running Tidemark: the app on loopback plus whichever local fakes the configuration asked for. */
export interface RunningTidemark {
  readonly url: string;
  readonly app: Express;
  readonly deps: AppDependencies;
  readonly services: AppServices;
  readonly fakes: { identity?: FakeIdentityProvider; storage?: StorageFake; mail?: MailCatcher };
  close(): Promise<void>;
}

/**
 * Starts Tidemark the same way for `npm start` and for tests: every service whose URL
 * is not configured is replaced by its local fake on loopback.
 */
export async function startTidemark(
  config: AppConfig,
  options: { logger?: Logger; clock?: () => Date; uploadFaults?: UploadFaultHooks } = {},
): Promise<RunningTidemark> {
  const logger = options.logger ?? pino({ level: config.logLevel });
  const server = http.createServer();
  await new Promise<void>((resolve) => server.listen(config.port, config.host, resolve));
  const port = (server.address() as AddressInfo).port;
  if (config.port === 0 || !process.env['PUBLIC_URL']) config.publicUrl = `http://${config.host}:${port}`;

  const fakes: RunningTidemark['fakes'] = {};
  let findActiveUser: ((email: string) => { email: string; name: string } | undefined) | undefined;
  const closers: (() => Promise<void> | void)[] = [
    () =>
      new Promise<void>((resolve) => {
        server.closeAllConnections();
        server.close(() => resolve());
      }),
  ];
  try {
    // Each fake is loaded only when it is used: a deployment on hosted services carries none of their code.
    if (!config.storage.endpoint) {
      const { startStorageFake } = await import('../storage-fake/s3-fake.js');
      fakes.storage = await startStorageFake({
        port: config.storage.fakePort,
        directory: path.join(config.dataDir, 'storage'),
        bucket: config.storage.bucket,
      });
      closers.push(() => fakes.storage!.close());
      config.storage.endpoint = fakes.storage.endpoint;
    }
    if (!config.identity.issuer) {
      const { startFakeIdentityProvider } = await import('./dev-fakes/identity-provider.js');
      fakes.identity = await startFakeIdentityProvider({
        port: config.identity.fakePort,
        accounts: DEMO_USERS.map((user) => ({ email: user.email, name: user.name, password: DEMO_PASSWORD })),
        // People invited later sign in at the local fake with the demo password.
        lookupAccount: (email) => {
          const user = findActiveUser?.(email);
          return user ? { email: user.email, name: user.name, password: DEMO_PASSWORD } : undefined;
        },
        client: {
          clientId: config.identity.clientId,
          clientSecret: config.identity.clientSecret,
          redirectUris: [`${config.publicUrl}/auth/callback`],
        },
      });
      closers.push(() => fakes.identity!.close());
      config.identity.issuer = fakes.identity.issuer;
    }
    if (!config.mail.smtpUrl) {
      const { startMailCatcher } = await import('./dev-fakes/mail-catcher.js');
      fakes.mail = await startMailCatcher({ port: config.mail.fakePort, folder: path.join(config.dataDir, 'mail') });
      closers.push(() => fakes.mail!.close());
      config.mail.smtpUrl = fakes.mail.smtpUrl;
    }

    const db = openDatabase(config.databaseFile);
    const userRepository = new UserRepository(db);
    findActiveUser = (email) => {
      const user = userRepository.findByEmail(email);
      return user?.active ? user : undefined;
    };
    closers.push(() => {
      db.$client.close();
    });
    if (config.seedDemo && seedDemoStudy(db, options.clock?.())) logger.info('seeded the demo study');

    const storage = new ObjectStorage(config.storage);
    closers.push(() => storage.destroy());
    const mailer = new Mailer(config.mail.smtpUrl, config.mail.from);
    closers.push(() => mailer.close());
    const relyingParty = new OidcRelyingParty(
      { ...config.identity, issuer: config.identity.issuer },
      `${config.publicUrl}/auth/callback`,
    );
    const deps: AppDependencies = {
      config,
      db,
      storage,
      mailer,
      relyingParty,
      logger,
      clock: options.clock,
      uploadFaults: options.uploadFaults,
    };
    const { app, services } = createApp(deps);
    closers.push(() => services.messages.settle());
    // Before the first request: files stored by requests that died before their commit are applied now.
    try {
      // Before the sweep, whose own receipts would otherwise be sent twice.
      const resent = services.messages.resendPending();
      if (resent > 0) logger.warn({ resent }, 'sent e-mails left pending by a stopped process');
      const swept = await services.uploads.sweepOrphans();
      if (swept.applied + swept.discarded + swept.kept > 0) logger.warn(swept, 'reconciled uploads interrupted by a crash');
      await services.referenceSets.removeInterruptedImports();
      if (config.seedDemoSessions) await seedDemoSessions(services, logger, options.clock?.());
    } catch (error) {
      // Storage down at start: the app still serves (health reports it); the sweep runs again at the next start.
      logger.error({ err: error }, 'could not reconcile stored uploads or seed demo sessions; storage unavailable?');
    }
    server.on('request', app);

    return {
      url: config.publicUrl,
      app,
      deps,
      services,
      fakes,
      close: async () => {
        for (const close of closers.reverse()) await close();
      },
    };
  } catch (error) {
    for (const close of closers.reverse()) await close();
    throw error;
  }
}

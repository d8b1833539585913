import { randomUUID } from 'node:crypto';
import fs from 'node:fs';
import path from 'node:path';
import cookieParser from 'cookie-parser';
import express, { type Express } from 'express';
import { rateLimit } from 'express-rate-limit';
import helmet from 'helmet';
import type { Logger } from 'pino';
import { pinoHttp } from 'pino-http';
import { AuditRepository } from './audit/audit-repository.js';
import { AuditTrail } from './audit/audit-trail.js';
import { AuthRepository } from './auth/auth-repository.js';
import { authRoutes } from './auth/auth-routes.js';
import { AuthService } from './auth/auth-service.js';
import type { OidcRelyingParty } from './auth/oidc-relying-party.js';
import { CalibrationRepository } from './calibration/calibration-repository.js';
import { calibrationRoutes } from './calibration/calibration-routes.js';
import { CalibrationService } from './calibration/calibration-service.js';
import type { AppConfig } from './config.js';
import { pingDatabase, type TidemarkDatabase } from './db/database.js';
import { formatRoutes } from './formats/format-routes.js';
import { healthRoutes } from './health/health-routes.js';
import { HealthService } from './health/health-service.js';
import { ApiRouteRegistry } from './http/api-route.js';
import { authenticate, requireCsrfToken } from './http/authenticate.js';
import { apiNotFound, errorHandler } from './http/error-handler.js';
import { uploadRateLimit } from './http/upload-rate-limit.js';
import type { Mailer } from './mail/mailer.js';
import { MessageRepository } from './messages/message-repository.js';
import { messageRoutes } from './messages/message-routes.js';
import { MessageService } from './messages/message-service.js';
import { loadProtocol } from './protocols/protocol-catalogue.js';
import { SessionRepository } from './sessions/session-repository.js';
import { sessionRoutes } from './sessions/session-routes.js';
import { SessionService } from './sessions/session-service.js';
import type { ObjectStorage } from './storage/object-storage.js';
import { StudyRepository } from './studies/study-repository.js';
import { studyRoutes } from './studies/study-routes.js';
import { StudyService } from './studies/study-service.js';
import { uploadRoutes } from './uploads/upload-routes.js';
import { UploadService, type UploadFaultHooks } from './uploads/upload-service.js';
import { UserRepository } from './users/user-repository.js';
import type { ResolvedProtocol } from '../shared/spirometry/protocol.js';
import { protocolRoutes } from './protocols/protocol-routes.js';
import { ProtocolService } from './protocols/protocol-service.js';
import { ReplayRepository } from './replay/replay-repository.js';
import { replayRoutes } from './replay/replay-routes.js';
import { ReplayService } from './replay/replay-service.js';
import { PeopleService } from './setup/people-service.js';
import { setupRoutes } from './setup/setup-routes.js';
import { SiteSetupService } from './setup/site-setup-service.js';
import { StudySetupRepository } from './setup/study-setup-repository.js';
import { StudySetupService } from './setup/study-setup-service.js';

import { FeedbackRepository } from './feedback/feedback-repository.js';
import { feedbackRoutes } from './feedback/feedback-routes.js';
import { FeedbackService } from './feedback/feedback-service.js';
import { QueryRepository } from './queries/query-repository.js';
import { queryRoutes } from './queries/query-routes.js';
import { QueryService } from './queries/query-service.js';
import { SiteContactRepository } from './queries/site-contact-repository.js';
import { AdjudicationRepository } from './reading/adjudication-repository.js';
// ── dual reading ──
import { adjudicationRoutes } from './reading/adjudication-routes.js';
import { AdjudicationService } from './reading/adjudication-service.js';
import { agreementRoutes } from './reading/agreement-routes.js';
// ── end dual reading ──
import { QueueTokens } from './reading/queue-token.js';
import { finaliseAfterSignedRead } from './reading/read-comparison.js';
import { ReadQueueService } from './reading/read-queue-service.js';
import { ReadingRepository } from './reading/reading-repository.js';
import { readingRoutes } from './reading/reading-routes.js';
import { ReadingService } from './reading/reading-service.js';
import { SignatureRepository } from './signatures/signature-repository.js';
import { SignatureService } from './signatures/signature-service.js';
// ── oversight (monitor's view) ──
import { AuditTrailQueryRepository } from './oversight/audit-trail-query-repository.js';
import { auditTrailQueryRoutes } from './oversight/audit-trail-query-routes.js';
import { AuditTrailQueryService } from './oversight/audit-trail-query-service.js';
import { PerformanceRepository } from './oversight/performance-repository.js';
import { performanceRoutes } from './oversight/performance-routes.js';
import { PerformanceService } from './oversight/performance-service.js';
// ── end oversight ──
// ── locks ──
import { LockGuard } from './locks/lock-guard.js';
import { LockRepository } from './locks/lock-repository.js';
import { lockRoutes } from './locks/lock-routes.js';
import { LockService } from './locks/lock-service.js';
// ── end locks ──
// ── releases ──
import { createReleaseService, releaseRoutes } from './releases/release-routes.js';
// ── end releases ──
import { ReferenceSetRepository } from './reference-sets/reference-set-repository.js';
import { referenceSetRoutes } from './reference-sets/reference-set-routes.js';
import { ReferenceSetService } from './reference-sets/reference-set-service.js';

export const APP_VERSION = '0.1.0';

/** Everything the app talks to, so tests can hand in real fakes on loopback. */
export interface AppDependencies {
  readonly config: AppConfig;
  readonly db: TidemarkDatabase;
  readonly storage: ObjectStorage;
  readonly mailer: Mailer;
  readonly relyingParty: OidcRelyingParty;
  readonly logger: Logger;
  readonly clock?: () => Date;
  /** Crash points for the crash-consistency tests only. */
  readonly uploadFaults?: UploadFaultHooks;
}

/** Services that outlive a request: start-up work and shutdown need them too. */
export interface AppServices {
  readonly audit: AuditTrail;
  readonly uploads: UploadService;
  readonly sessions: SessionService;
  readonly messages: MessageService;
  readonly referenceSets: ReferenceSetService;
  readonly signatures: SignatureService;
  readonly reading: ReadingService;
  readonly queries: QueryService;
  readonly feedback: FeedbackService;
}

/** Wires the Express app; listening is the caller's business. */
export function createApp(deps: AppDependencies): { app: Express; registry: ApiRouteRegistry; services: AppServices } {
  const { config, db, storage, mailer, relyingParty, logger } = deps;
  const clock = deps.clock ?? (() => new Date());
  const users = new UserRepository(db);
  const auth = new AuthService(new AuthRepository(db), users, config.session, clock);
  const studyRepository = new StudyRepository(db);
  const studies = new StudyService(studyRepository);
  const audit = new AuditTrail(new AuditRepository(db), clock);
  const sessionRepository = new SessionRepository(db);
  const lockRepository = new LockRepository(db);
  const lockGuard = new LockGuard(lockRepository);
  const sessions = new SessionService(sessionRepository, studyRepository, audit, clock, lockGuard);
  const messages = new MessageService(new MessageRepository(db), users, mailer, () => config.publicUrl, clock, logger);
  const calibrationRepository = new CalibrationRepository(db);
  const calibration = new CalibrationService(calibrationRepository, studyRepository, audit, clock, lockGuard);
  const ruleSets = new ProtocolService();
  const replays = new ReplayService(new ReplayRepository(db), studyRepository, ruleSets, audit, storage, config.uploads, clock, logger);
  const setupRepository = new StudySetupRepository(db);
  const studySetup = new StudySetupService(setupRepository, audit, clock);
  const siteSetup = new SiteSetupService(setupRepository, audit, clock);
  const people = new PeopleService(setupRepository, audit, messages, clock);
  const protocols = new Map<string, ResolvedProtocol>();
  const protocolFor = (ruleSetId: string): ResolvedProtocol => {
    let protocol = protocols.get(ruleSetId);
    if (!protocol) {
      protocol = loadProtocol(ruleSetId);
      protocols.set(ruleSetId, protocol);
    }
    return protocol;
  };
  const uploads = new UploadService(
    sessionRepository,
    sessions,
    studyRepository,
    calibrationRepository,
    audit,
    storage,
    messages,
    protocolFor,
    config.uploads,
    clock,
    logger,
    deps.uploadFaults,
  );
  const siteContacts = new SiteContactRepository(db);
  const queries = new QueryService(new QueryRepository(db), siteContacts, sessionRepository, sessions, audit, messages, clock);
  const feedback = new FeedbackService(
    new FeedbackRepository(db),
    sessionRepository,
    sessions,
    studyRepository,
    uploads,
    siteContacts,
    messages,
    protocolFor,
    logger,
    // Called per request, after `reading` below exists: the signature's content check belongs to the reads.
    { signatureOf: (readId) => reading.signatureOf(readId) },
  );
  const signatures = new SignatureService(new SignatureRepository(db), clock);
  const readingRepository = new ReadingRepository(db);
  const readFinalisation = { repository: new AdjudicationRepository(db), audit, clock };
  const reading = new ReadingService(readingRepository, sessionRepository, studyRepository, uploads, signatures, audit, protocolFor, clock, logger, {
    onFinal: (sessionId) => feedback.onFinal(sessionId),
    finaliseAfterSignedRead: (readId) => void finaliseAfterSignedRead(readFinalisation, readId),
  });
  const queueTokens = new QueueTokens(config.dataDir);
  const readQueue = new ReadQueueService(readingRepository, sessionRepository, studyRepository, reading, queueTokens, audit, clock);
  // ── dual reading ──
  const adjudication = new AdjudicationService(readFinalisation.repository, sessionRepository, studyRepository, reading, queueTokens, audit, clock);
  // ── end dual reading ──
  // ── locks ──
  const locks = new LockService(lockRepository, signatures, (scope) => queries.openQueryCount(scope), audit, clock);
  // ── end locks ──
  const releases = createReleaseService(deps, { audit, messages, signatures, clock });
  const health = new HealthService(
    {
      database: () => pingDatabase(db),
      storage: () => storage.ping(),
      identityProvider: () => relyingParty.ping(),
      mail: () => mailer.ping(),
    },
    APP_VERSION,
  );
  const referenceSets = new ReferenceSetService(new ReferenceSetRepository(db), audit, storage, clock, logger);
  // ── oversight (monitor's view) ──
  const auditTrailQuery = new AuditTrailQueryService(new AuditTrailQueryRepository(db), studyRepository, audit, clock);
  const performance = new PerformanceService(new PerformanceRepository(db), studyRepository, clock);
  // ── end oversight ──
  const registry = new ApiRouteRegistry();

  const app = express();
  app.disable('x-powered-by');
  app.set('trust proxy', 'loopback');
  app.use(
    pinoHttp({
      logger,
      genReqId: (req, res) => {
        const incoming = req.headers['x-request-id'];
        const id = typeof incoming === 'string' && /^[\w-]{1,64}$/.test(incoming) ? incoming : randomUUID();
        res.setHeader('x-request-id', id);
        return id;
      },
      autoLogging: { ignore: (req) => req.url === '/api/health' },
    }),
  );
  app.use(
    helmet({
      contentSecurityPolicy: {
        directives: {
          defaultSrc: ["'self'"],
          scriptSrc: ["'self'"],
          // Angular Material and plotly set style attributes at run time.
          styleSrc: ["'self'", "'unsafe-inline'"],
          imgSrc: ["'self'", 'data:', 'blob:'],
          fontSrc: ["'self'", 'data:'],
          connectSrc: ["'self'"],
          objectSrc: ["'none'"],
          frameAncestors: ["'none'"],
          formAction: ["'self'", ...(config.identity.issuer ? [new URL(config.identity.issuer).origin] : [])],
          upgradeInsecureRequests: config.session.secureCookies ? [] : null,
        },
      },
      strictTransportSecurity: config.session.secureCookies,
    }),
  );
  app.use(cookieParser());
  app.use(express.json({ limit: '2mb' }));
  app.use('/auth/login', rateLimit({ windowMs: 60_000, limit: 30, standardHeaders: 'draft-8', legacyHeaders: false }));
  app.use(authenticate(auth));
  app.use(requireCsrfToken);
  // Upload rate limit (TIDEMARK_UPLOAD_RATE_PER_MINUTE): after authentication, so it counts per user, and before multer.
  app.post('/api/studies/:studyId/sessions/:sessionId/uploads', uploadRateLimit(config.uploads.ratePerMinute));

  app.use(
    authRoutes({
      registry,
      auth,
      relyingParty,
      publicUrl: config.publicUrl,
      secureCookies: config.session.secureCookies,
    }),
  );
  app.use(healthRoutes(registry, health, APP_VERSION));
  app.use(studyRoutes(registry, studies));
  app.use(formatRoutes(registry));
  app.use(messageRoutes(registry, messages));
  app.use(sessionRoutes(registry, sessions));
  app.use(uploadRoutes(registry, uploads, config.uploads.maxBytes));
  app.use(calibrationRoutes(registry, calibration));
  app.use(referenceSetRoutes(registry, referenceSets));
  app.use(protocolRoutes(registry, ruleSets));
  app.use(replayRoutes(registry, replays));
  app.use(setupRoutes(registry, { studies: studySetup, sites: siteSetup, people }));
  app.use(queryRoutes(registry, queries));
  app.use(feedbackRoutes(registry, feedback));
  app.use(readingRoutes(registry, readQueue, reading));
  app.use(adjudicationRoutes(registry, adjudication)); // dual reading
  app.use(agreementRoutes(registry, adjudication)); // dual reading
  app.use(auditTrailQueryRoutes(registry, auditTrailQuery));
  app.use(performanceRoutes(registry, performance));
  app.use(lockRoutes(registry, locks));
  app.use(releaseRoutes(registry, releases));
  app.use(['/api', '/auth'], apiNotFound);

  serveWebClient(app, config.webDir);
  app.use(errorHandler);
  return { app, registry, services: { audit, uploads, sessions, messages, referenceSets, queries, feedback, signatures, reading } };
}

/** Serves the built Angular app, with every other GET falling back to its index page. */
function serveWebClient(app: Express, webDir: string): void {
  const indexFile = path.join(webDir, 'index.html');
  app.use(express.static(webDir, { index: false, maxAge: '1h' }));
  app.get('/{*spa}', (_req, res) => {
    if (!fs.existsSync(indexFile)) {
      res.status(503).type('text/plain').send('The web client is not built yet: run `npm run build`.');
      return;
    }
    res.setHeader('Cache-Control', 'no-cache');
    res.sendFile(indexFile);
  });
}

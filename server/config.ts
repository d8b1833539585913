import path from 'node:path';
import { z } from 'zod';

const optionalUrl = z.url().optional();
const flag = z
  .enum(['true', 'false', '1', '0'])
  .transform((value) => value === 'true' || value === '1');

/** Every setting Tidemark reads from the environment; this file is its only reader. */
const environmentSchema = z.object({
  HOST: z.string().default('127.0.0.1'),
  PORT: z.coerce.number().int().min(0).max(65535).default(4300),
  PUBLIC_URL: optionalUrl,
  LOG_LEVEL: z.enum(['fatal', 'error', 'warn', 'info', 'debug', 'trace', 'silent']).default('info'),
  TIDEMARK_DATA_DIR: z.string().default('data'),
  TIDEMARK_DB_FILE: z.string().optional(),
  TIDEMARK_WEB_DIR: z.string().default('dist/web/browser'),
  TIDEMARK_SEED_DEMO: flag.default(true),
  /** Whether the demo study also gets its uploaded sessions (off for benchmarks that want an empty study). */
  TIDEMARK_SEED_DEMO_SESSIONS: flag.default(true),
  TIDEMARK_REFERENCE_DIR: z.string().optional(),

  TIDEMARK_S3_ENDPOINT: optionalUrl,
  TIDEMARK_S3_REGION: z.string().default('us-east-1'),
  TIDEMARK_S3_BUCKET: z.string().default('tidemark-uploads'),
  TIDEMARK_S3_ACCESS_KEY_ID: z.string().default('S3RVER'),
  TIDEMARK_S3_SECRET_ACCESS_KEY: z.string().default('S3RVER'),
  TIDEMARK_S3_FORCE_PATH_STYLE: flag.default(true),
  TIDEMARK_FAKE_S3_PORT: z.coerce.number().int().min(0).default(4302),

  TIDEMARK_OIDC_ISSUER: optionalUrl,
  TIDEMARK_OIDC_CLIENT_ID: z.string().default('tidemark-web'),
  TIDEMARK_OIDC_CLIENT_SECRET: z.string().default('tidemark-local-fake-secret'),
  TIDEMARK_FAKE_IDP_PORT: z.coerce.number().int().min(0).default(4301),

  TIDEMARK_SMTP_URL: optionalUrl,
  TIDEMARK_MAIL_FROM: z.string().default('Tidemark <no-reply@tidemark.example>'),
  TIDEMARK_FAKE_SMTP_PORT: z.coerce.number().int().min(0).default(4325),

  TIDEMARK_UPLOAD_MAX_MB: z.coerce.number().positive().max(1024).default(25),
  /** Session-file uploads one user (or one address, for a caller not signed in) may send per minute. */
  TIDEMARK_UPLOAD_RATE_PER_MINUTE: z.coerce.number().int().positive().default(120),

  TIDEMARK_SESSION_IDLE_MINUTES: z.coerce.number().positive().default(30),
  TIDEMARK_SESSION_MAX_HOURS: z.coerce.number().positive().default(12),
  TIDEMARK_SECURE_COOKIES: flag.optional(),
});

/** Resolved configuration. An unset service URL means "start the local fake". */
export interface AppConfig {
  readonly host: string;
  readonly port: number;
  /** Set once the port is known when `PUBLIC_URL` is not given. */
  publicUrl: string;
  readonly logLevel: z.infer<typeof environmentSchema>['LOG_LEVEL'];
  readonly dataDir: string;
  readonly databaseFile: string;
  readonly webDir: string;
  readonly seedDemo: boolean;
  readonly seedDemoSessions: boolean;
  readonly referenceDir: string | undefined;
  readonly storage: {
    endpoint: string | undefined;
    readonly region: string;
    readonly bucket: string;
    readonly accessKeyId: string;
    readonly secretAccessKey: string;
    readonly forcePathStyle: boolean;
    readonly fakePort: number;
  };
  readonly identity: {
    issuer: string | undefined;
    readonly clientId: string;
    readonly clientSecret: string;
    readonly fakePort: number;
  };
  readonly mail: {
    smtpUrl: string | undefined;
    readonly from: string;
    readonly fakePort: number;
  };
  /** Largest session file accepted, and the zip expansion limits that guard against archive bombs. */
  readonly uploads: {
    readonly maxBytes: number;
    readonly maxExpandedBytes: number;
    readonly maxZipEntries: number;
    readonly maxCompressionRatio: number;
    /** Uploads accepted per user (or per address) per minute; more answer 429. */
    readonly ratePerMinute: number;
  };
  readonly session: { readonly idleMinutes: number; readonly maxHours: number; readonly secureCookies: boolean };
}

/** Parses the environment once; a bad value stops the start with the variable's name. */
export function loadConfig(env: NodeJS.ProcessEnv = process.env): AppConfig {
  const parsed = environmentSchema.safeParse(env);
  if (!parsed.success) {
    const problems = parsed.error.issues.map((issue) => `${issue.path.join('.')}: ${issue.message}`);
    throw new Error(`Invalid configuration: ${problems.join('; ')}`);
  }
  const e = parsed.data;
  const dataDir = path.resolve(e.TIDEMARK_DATA_DIR);
  const publicUrl = e.PUBLIC_URL ?? `http://${e.HOST}:${e.PORT}`;
  return {
    host: e.HOST,
    port: e.PORT,
    publicUrl: publicUrl.replace(/\/$/, ''),
    logLevel: e.LOG_LEVEL,
    dataDir,
    databaseFile: path.resolve(e.TIDEMARK_DB_FILE ?? path.join(dataDir, 'tidemark.sqlite')),
    webDir: path.resolve(e.TIDEMARK_WEB_DIR),
    seedDemo: e.TIDEMARK_SEED_DEMO,
    seedDemoSessions: e.TIDEMARK_SEED_DEMO && e.TIDEMARK_SEED_DEMO_SESSIONS,
    referenceDir: e.TIDEMARK_REFERENCE_DIR,
    storage: {
      endpoint: e.TIDEMARK_S3_ENDPOINT,
      region: e.TIDEMARK_S3_REGION,
      bucket: e.TIDEMARK_S3_BUCKET,
      accessKeyId: e.TIDEMARK_S3_ACCESS_KEY_ID,
      secretAccessKey: e.TIDEMARK_S3_SECRET_ACCESS_KEY,
      forcePathStyle: e.TIDEMARK_S3_FORCE_PATH_STYLE,
      fakePort: e.TIDEMARK_FAKE_S3_PORT,
    },
    identity: {
      issuer: e.TIDEMARK_OIDC_ISSUER,
      clientId: e.TIDEMARK_OIDC_CLIENT_ID,
      clientSecret: e.TIDEMARK_OIDC_CLIENT_SECRET,
      fakePort: e.TIDEMARK_FAKE_IDP_PORT,
    },
    mail: { smtpUrl: e.TIDEMARK_SMTP_URL, from: e.TIDEMARK_MAIL_FROM, fakePort: e.TIDEMARK_FAKE_SMTP_PORT },
    uploads: {
      maxBytes: Math.round(e.TIDEMARK_UPLOAD_MAX_MB * 1024 * 1024),
      // Effort CSVs deflate 4-5 times; an entry expanding 100 times is an archive bomb, not a session.
      maxExpandedBytes: Math.round(e.TIDEMARK_UPLOAD_MAX_MB * 1024 * 1024 * 8),
      maxZipEntries: 1000,
      maxCompressionRatio: 100,
      ratePerMinute: e.TIDEMARK_UPLOAD_RATE_PER_MINUTE,
    },
    session: {
      idleMinutes: e.TIDEMARK_SESSION_IDLE_MINUTES,
      maxHours: e.TIDEMARK_SESSION_MAX_HOURS,
      secureCookies: e.TIDEMARK_SECURE_COOKIES ?? publicUrl.startsWith('https://'),
    },
  };
}

/**
 * The folder a command was started from. `npm run` moves to the package root, and npm
 * keeps the caller's folder in INIT_CWD, so relative paths given on a command line stay
 * relative to where the user typed them.
 */
export function callerWorkingDirectory(env: NodeJS.ProcessEnv = process.env): string {
  return env['INIT_CWD'] ?? process.cwd();
}

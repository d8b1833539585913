import { sql } from 'drizzle-orm';
import { index, integer, sqliteTable, text, uniqueIndex } from 'drizzle-orm/sqlite-core';

const createdAt = () =>
  text('created_at')
    .notNull()
    .default(sql`(strftime('%Y-%m-%dT%H:%M:%fZ','now'))`);

/** People who sign in. Never deleted: deactivated, so their audit rows stay attributed. */
export const users = sqliteTable('users', {
  id: text('id').primaryKey(),
  email: text('email').notNull().unique(),
  name: text('name').notNull(),
  active: integer('active', { mode: 'boolean' }).notNull().default(true),
  createdAt: createdAt(),
});

export const studies = sqliteTable('studies', {
  id: text('id').primaryKey(),
  code: text('code').notNull().unique(),
  title: text('title').notNull(),
  sponsor: text('sponsor').notNull(),
  indication: text('indication').notNull(),
  protocolRuleSetId: text('protocol_rule_set_id').notNull(),
  createdAt: createdAt(),
});

export const sites = sqliteTable(
  'sites',
  {
    id: text('id').primaryKey(),
    studyId: text('study_id')
      .notNull()
      .references(() => studies.id),
    number: text('number').notNull(),
    name: text('name').notNull(),
    countryCode: text('country_code').notNull(),
    timeZone: text('time_zone').notNull(),
    createdAt: createdAt(),
  },
  (table) => [uniqueIndex('sites_study_number').on(table.studyId, table.number)],
);

/** One role held by one user in one study; a null site means the whole study. */
export const roleAssignments = sqliteTable(
  'role_assignments',
  {
    id: text('id').primaryKey(),
    userId: text('user_id')
      .notNull()
      .references(() => users.id),
    studyId: text('study_id')
      .notNull()
      .references(() => studies.id),
    role: text('role').notNull(),
    siteId: text('site_id').references(() => sites.id),
    createdAt: createdAt(),
  },
  (table) => [
    index('role_assignments_user').on(table.userId),
    uniqueIndex('role_assignments_unique').on(table.userId, table.studyId, table.role, table.siteId),
  ],
);

/** Browser sessions; only a hash of the cookie value is stored. */
export const authSessions = sqliteTable(
  'auth_sessions',
  {
    idHash: text('id_hash').primaryKey(),
    userId: text('user_id')
      .notNull()
      .references(() => users.id),
    csrfToken: text('csrf_token').notNull(),
    /** When the identity provider last authenticated the user (OIDC auth_time), ISO UTC. */
    authTime: text('auth_time').notNull(),
    createdAt: createdAt(),
    lastSeenAt: text('last_seen_at').notNull(),
    expiresAt: text('expires_at').notNull(),
    endedAt: text('ended_at'),
  },
  (table) => [index('auth_sessions_user').on(table.userId)],
);

/** Sign-ins in flight: PKCE verifier, state and nonce between redirect and callback. */
export const loginAttempts = sqliteTable('login_attempts', {
  state: text('state').primaryKey(),
  codeVerifier: text('code_verifier').notNull(),
  nonce: text('nonce').notNull(),
  returnTo: text('return_to').notNull(),
  createdAt: createdAt(),
});

/** Bearer tokens for automation; only a hash is stored. */
export const apiTokens = sqliteTable(
  'api_tokens',
  {
    id: text('id').primaryKey(),
    userId: text('user_id')
      .notNull()
      .references(() => users.id),
    tokenHash: text('token_hash').notNull().unique(),
    label: text('label').notNull(),
    createdAt: createdAt(),
    lastUsedAt: text('last_used_at'),
    revokedAt: text('revoked_at'),
  },
  (table) => [index('api_tokens_user').on(table.userId)],
);

/**
 * The database schema (Drizzle). Migrations are generated from this file into drizzle/ with
 * `npm run db:generate` and committed; the server applies them at start.
 */
import { sql } from 'drizzle-orm'
import {
  pgTable, serial, integer, text, varchar, timestamp, boolean, jsonb, json, index, uniqueIndex, customType, primaryKey,
} from 'drizzle-orm/pg-core'

const bytea = customType<{ data: Buffer; driverData: Buffer }>({ dataType: () => 'bytea' })
const now = () => timestamp({ withTimezone: true }).notNull().defaultNow()

// ── accounts and teams ──────────────────────────────────────────────────────────────────────────
export const users = pgTable('users', {
  id: serial().primaryKey(),
  email: varchar({ length: 254 }).notNull(),
  name: text().notNull(),
  passwordHash: text('password_hash').notNull(),
  notifyOnFit: boolean('notify_on_fit').notNull().default(true),
  /** set when the owner followed a link mailed to the address (or joined through an invitation link) */
  emailVerifiedAt: timestamp('email_verified_at', { withTimezone: true }),
  currentWorkspaceId: integer('current_workspace_id'),
  createdAt: now(),
}, (t) => [uniqueIndex('users_email_uq').on(t.email)])

export const workspaces = pgTable('workspaces', {
  id: serial().primaryKey(),
  slug: varchar({ length: 64 }).notNull(),
  name: text().notNull(),
  /** four-eyes rule: a model version cannot be approved by its own author */
  fourEyes: boolean('four_eyes').notNull().default(false),
  createdAt: now(),
}, (t) => [uniqueIndex('workspaces_slug_uq').on(t.slug)])

export const memberships = pgTable('memberships', {
  workspaceId: integer('workspace_id').notNull().references(() => workspaces.id, { onDelete: 'cascade' }),
  userId: integer('user_id').notNull().references(() => users.id, { onDelete: 'cascade' }),
  role: varchar({ length: 16 }).notNull(),
  createdAt: now(),
}, (t) => [primaryKey({ columns: [t.workspaceId, t.userId] }), index('memberships_user_idx').on(t.userId)])

/** express-session store (connect-pg-simple's layout). */
export const userSessions = pgTable('user_sessions', {
  sid: varchar().primaryKey(),
  sess: json().notNull(),
  expire: timestamp({ precision: 6 }).notNull(),
}, (t) => [index('user_sessions_expire_idx').on(t.expire)])

export const invitations = pgTable('invitations', {
  id: serial().primaryKey(),
  workspaceId: integer('workspace_id').notNull().references(() => workspaces.id, { onDelete: 'cascade' }),
  email: varchar({ length: 254 }).notNull(),
  role: varchar({ length: 16 }).notNull(),
  tokenHash: text('token_hash').notNull(),
  invitedBy: integer('invited_by').references(() => users.id, { onDelete: 'set null' }),
  expiresAt: timestamp('expires_at', { withTimezone: true }).notNull(),
  acceptedAt: timestamp('accepted_at', { withTimezone: true }),
  revokedAt: timestamp('revoked_at', { withTimezone: true }),
  createdAt: now(),
}, (t) => [uniqueIndex('invitations_token_uq').on(t.tokenHash)])

export const passwordResets = pgTable('password_resets', {
  id: serial().primaryKey(),
  userId: integer('user_id').notNull().references(() => users.id, { onDelete: 'cascade' }),
  tokenHash: text('token_hash').notNull(),
  expiresAt: timestamp('expires_at', { withTimezone: true }).notNull(),
  usedAt: timestamp('used_at', { withTimezone: true }),
  createdAt: now(),
}, (t) => [uniqueIndex('password_resets_token_uq').on(t.tokenHash)])

/**
 * E-mail verification links. A sign-up stores the chosen name and password hash here and creates the
 * account only when the link is followed; a signed-in, unverified account (userId set) asks for one too.
 */
export const emailVerifications = pgTable('email_verifications', {
  id: serial().primaryKey(),
  email: varchar({ length: 254 }).notNull(),
  userId: integer('user_id').references(() => users.id, { onDelete: 'cascade' }),
  name: text(),
  passwordHash: text('password_hash'),
  tokenHash: text('token_hash').notNull(),
  expiresAt: timestamp('expires_at', { withTimezone: true }).notNull(),
  usedAt: timestamp('used_at', { withTimezone: true }),
  createdAt: now(),
}, (t) => [uniqueIndex('email_verifications_token_uq').on(t.tokenHash), index('email_verifications_email_idx').on(t.email)])

export const apiTokens = pgTable('api_tokens', {
  id: serial().primaryKey(),
  userId: integer('user_id').notNull().references(() => users.id, { onDelete: 'cascade' }),
  workspaceId: integer('workspace_id').notNull().references(() => workspaces.id, { onDelete: 'cascade' }),
  name: text().notNull(),
  role: varchar({ length: 16 }).notNull(),
  prefix: varchar({ length: 16 }).notNull(),
  tokenHash: text('token_hash').notNull(),
  lastUsedAt: timestamp('last_used_at', { withTimezone: true }),
  revokedAt: timestamp('revoked_at', { withTimezone: true }),
  createdAt: now(),
}, (t) => [uniqueIndex('api_tokens_hash_uq').on(t.tokenHash)])

export const auditLog = pgTable('audit_log', {
  id: serial().primaryKey(),
  workspaceId: integer('workspace_id').references(() => workspaces.id, { onDelete: 'cascade' }),
  actorId: integer('actor_id').references(() => users.id, { onDelete: 'set null' }),
  action: varchar({ length: 48 }).notNull(),
  target: text(),
  details: jsonb(),
  ip: varchar({ length: 64 }),
  createdAt: now(),
}, (t) => [index('audit_ws_time_idx').on(t.workspaceId, t.createdAt)])

/** Messages captured by the local fake SMTP server (development and tests only). */
export const mailbox = pgTable('mailbox', {
  id: serial().primaryKey(),
  from: text().notNull(),
  to: text().notNull(),
  /** the envelope's recipient addresses, lower-cased: a signed-in user reads the messages addressed to them */
  recipients: text().array().notNull().default(sql`'{}'::text[]`),
  subject: text().notNull(),
  text: text().notNull(),
  html: text(),
  receivedAt: now(),
})

// ── the model library ───────────────────────────────────────────────────────────────────────────
export const models = pgTable('models', {
  id: serial().primaryKey(),
  workspaceId: integer('workspace_id').notNull().references(() => workspaces.id, { onDelete: 'cascade' }),
  ownerId: integer('owner_id').notNull().references(() => users.id),
  slug: varchar({ length: 80 }).notNull(),
  title: text().notNull(),
  description: text().notNull().default(''),
  tags: text().array().notNull().default(sql`'{}'::text[]`),
  /** set for shipped templates: the file name in models/ */
  template: varchar({ length: 120 }),
  forkOfModelId: integer('fork_of_model_id'),
  forkOfVersion: integer('fork_of_version'),
  createdAt: now(),
  updatedAt: now(),
}, (t) => [uniqueIndex('models_ws_slug_uq').on(t.workspaceId, t.slug), index('models_fork_idx').on(t.forkOfModelId)])

export const modelMaintainers = pgTable('model_maintainers', {
  modelId: integer('model_id').notNull().references(() => models.id, { onDelete: 'cascade' }),
  userId: integer('user_id').notNull().references(() => users.id, { onDelete: 'cascade' }),
}, (t) => [primaryKey({ columns: [t.modelId, t.userId] })])

export const modelVersions = pgTable('model_versions', {
  id: serial().primaryKey(),
  modelId: integer('model_id').notNull().references(() => models.id, { onDelete: 'cascade' }),
  number: integer().notNull(),
  text: text().notNull(),
  note: text().notNull().default(''),
  authorId: integer('author_id').notNull().references(() => users.id),
  summary: jsonb().notNull(),
  status: varchar({ length: 16 }).notNull().default('draft'),
  approvedBy: integer('approved_by').references(() => users.id),
  approvedAt: timestamp('approved_at', { withTimezone: true }),
  /** run whose estimates this version carries, when published from a fit */
  fromRunId: integer('from_run_id'),
  /** where the review stands for a version not approved: 'requested' | 'changes-requested' | null (not asked) */
  review: varchar({ length: 24 }),
  createdAt: now(),
}, (t) => [uniqueIndex('model_versions_model_number_uq').on(t.modelId, t.number), index('model_versions_review_idx').on(t.review)])

/** The review history of versions: requests, approvals and change requests, each with its comment. */
export const versionReviews = pgTable('version_reviews', {
  id: serial().primaryKey(),
  versionId: integer('version_id').notNull().references(() => modelVersions.id, { onDelete: 'cascade' }),
  actorId: integer('actor_id').references(() => users.id, { onDelete: 'set null' }),
  /** 'requested' | 'approved' | 'changes-requested' */
  action: varchar({ length: 24 }).notNull(),
  comment: text().notNull().default(''),
  createdAt: now(),
}, (t) => [index('version_reviews_version_idx').on(t.versionId)])

/** Lineage: the exact part versions a version's sheet uses (directly or inside its parts). */
export const modelVersionParts = pgTable('model_version_parts', {
  versionId: integer('version_id').notNull().references(() => modelVersions.id, { onDelete: 'cascade' }),
  partModelId: integer('part_model_id').notNull().references(() => models.id),
  partVersion: integer('part_version').notNull(),
}, (t) => [primaryKey({ columns: [t.versionId, t.partModelId, t.partVersion] }), index('model_version_parts_part_idx').on(t.partModelId, t.partVersion)])

export const modelDrafts = pgTable('model_drafts', {
  modelId: integer('model_id').notNull().references(() => models.id, { onDelete: 'cascade' }),
  userId: integer('user_id').notNull().references(() => users.id, { onDelete: 'cascade' }),
  text: text().notNull(),
  baseVersion: integer('base_version').notNull(),
  updatedAt: now(),
}, (t) => [primaryKey({ columns: [t.modelId, t.userId] })])

// ── projects, datasets, runs ────────────────────────────────────────────────────────────────────
export const projects = pgTable('projects', {
  id: serial().primaryKey(),
  workspaceId: integer('workspace_id').notNull().references(() => workspaces.id, { onDelete: 'cascade' }),
  name: text().notNull(),
  description: text().notNull().default(''),
  createdBy: integer('created_by').references(() => users.id, { onDelete: 'set null' }),
  createdAt: now(),
}, (t) => [index('projects_ws_idx').on(t.workspaceId)])

export const datasets = pgTable('datasets', {
  id: serial().primaryKey(),
  workspaceId: integer('workspace_id').notNull().references(() => workspaces.id, { onDelete: 'cascade' }),
  projectId: integer('project_id').notNull().references(() => projects.id, { onDelete: 'cascade' }),
  name: text().notNull(),
  filename: text().notNull(),
  /** 'estimation' | 'validation' | null */
  purpose: varchar({ length: 16 }),
  contentHash: varchar('content_hash', { length: 64 }).notNull(),
  original: bytea().notNull(),
  /** column metadata: name, unit, statistics */
  columns: jsonb().notNull(),
  /** the parsed numeric columns: { time: number[], columns: { name: (number|null)[] } } */
  data: jsonb().notNull(),
  rowCount: integer('row_count').notNull(),
  warnings: jsonb().notNull().default(sql`'[]'::jsonb`),
  parentId: integer('parent_id'),
  steps: jsonb().notNull().default(sql`'[]'::jsonb`),
  createdBy: integer('created_by').references(() => users.id, { onDelete: 'set null' }),
  createdAt: now(),
}, (t) => [index('datasets_project_idx').on(t.projectId)])

export const bindings = pgTable('bindings', {
  id: serial().primaryKey(),
  projectId: integer('project_id').notNull().references(() => projects.id, { onDelete: 'cascade' }),
  modelId: integer('model_id').notNull().references(() => models.id),
  modelVersion: integer('model_version').notNull(),
  /** which version a run of this binding takes: 'pinned' (modelVersion) | 'latest' | 'approved' (the newest approved) */
  follow: varchar({ length: 16 }).notNull().default('pinned'),
  name: text().notNull(),
  /** { inputs: { sheetInput: column }, outputs: { sheetOutput: column } } */
  mapping: jsonb().notNull(),
  createdAt: now(),
})

export const runs = pgTable('runs', {
  id: serial().primaryKey(),
  workspaceId: integer('workspace_id').notNull().references(() => workspaces.id, { onDelete: 'cascade' }),
  projectId: integer('project_id').notNull().references(() => projects.id, { onDelete: 'cascade' }),
  modelId: integer('model_id').notNull().references(() => models.id),
  modelVersion: integer('model_version').notNull(),
  bindingId: integer('binding_id'),
  /** lifecycle: queued | running | succeeded (shown as "finished") | failed | cancelled */
  status: varchar({ length: 16 }).notNull().default('queued'),
  /** the optimiser's outcome once the fit ran (shared/api/fit.ts fitStatus), separate from the lifecycle */
  outcome: varchar({ length: 16 }),
  /** for outcome 'converged': gradient | step | cost-change */
  convergedBy: varchar('converged_by', { length: 16 }),
  settings: jsonb().notNull(),
  provenance: jsonb().notNull(),
  progress: jsonb(),
  result: jsonb(),
  error: text(),
  cancelRequested: boolean('cancel_requested').notNull().default(false),
  workerId: text('worker_id'),
  attempts: integer().notNull().default(0),
  heartbeatAt: timestamp('heartbeat_at', { withTimezone: true }),
  createdBy: integer('created_by').references(() => users.id, { onDelete: 'set null' }),
  createdAt: now(),
  startedAt: timestamp('started_at', { withTimezone: true }),
  finishedAt: timestamp('finished_at', { withTimezone: true }),
}, (t) => [index('runs_project_idx').on(t.projectId), index('runs_model_idx').on(t.modelId), index('runs_status_idx').on(t.status)])

export const parameterSets = pgTable('parameter_sets', {
  id: serial().primaryKey(),
  projectId: integer('project_id').notNull().references(() => projects.id, { onDelete: 'cascade' }),
  runId: integer('run_id').references(() => runs.id, { onDelete: 'set null' }),
  modelId: integer('model_id').notNull().references(() => models.id),
  name: text().notNull(),
  values: jsonb().notNull(),
  createdBy: integer('created_by').references(() => users.id, { onDelete: 'set null' }),
  createdAt: now(),
})

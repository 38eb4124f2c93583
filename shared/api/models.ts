/**
 * The model library API: zod schemas of every request and reply under
 * /api/workspaces/:ws/models and POST /api/check. Used by the server (parse) and the client (types,
 * reply checks).
 */
import { z } from 'zod'
import { visibleText } from './text'

export const versionStatuses = ['draft', 'approved'] as const
export const versionStatus = z.enum(versionStatuses)
export type VersionStatus = z.infer<typeof versionStatus>

/** Largest sheet text accepted (characters). */
export const MAX_SHEET_CHARS = 200_000

export const sheetText = z.string().max(MAX_SHEET_CHARS, `a sheet may have at most ${MAX_SHEET_CHARS} characters`)
const tag = z.string().trim().toLowerCase().min(1, 'a tag may not be empty').max(40, 'a tag has at most 40 characters')
  .regex(/^[a-z0-9][a-z0-9 _-]*$/, 'a tag uses letters, digits, spaces, - and _')

// ── the parsed summary of a sheet (what checkModel reports) ─────────────────────────────────────
/** A place on one line of a sheet: 1-based line and columns, endColumn exclusive. */
export const sheetRange = z.object({ line: z.number().int().min(1), column: z.number().int().min(1), endColumn: z.number().int().min(1) })
/** The one obvious repair of a diagnostic: replace the text at `range` by `text` (the editor's quick fix). */
export const diagnosticFix = z.object({
  title: z.string(),
  range: sheetRange,
  text: z.string(),
})
export type DiagnosticFixDto = z.infer<typeof diagnosticFix>
export const diagnosticDto = z.object({
  line: z.number(),
  column: z.number(),
  endColumn: z.number(),
  severity: z.enum(['error', 'warning']),
  message: z.string(),
  fix: diagnosticFix.optional(),
})
export type DiagnosticDto = z.infer<typeof diagnosticDto>

const num = z.number().nullable()
/** One parameter as the sheet declares it (declared units, as written). */
export const summaryParameter = z.object({
  name: z.string(),
  value: z.number(),
  unit: z.string(),
  lower: num,
  upper: num,
  fixed: z.boolean(),
  description: z.string(),
  line: z.number(),
})
export type SummaryParameter = z.infer<typeof summaryParameter>

/**
 * States, parameters (with units and bounds), inputs and outputs of a sheet: the shape of
 * shared/sheet's SheetSummary (checkModel), stored with every version.
 */
export const sheetSummary = z.object({
  title: z.string(),
  kind: z.enum(['continuous', 'discrete']),
  timeUnit: z.string(),
  sampleTime: num,
  states: z.array(z.object({
    name: z.string(), unit: z.string(), initial: z.number(), lower: num, upper: num, estimate: z.boolean(), steady: z.boolean(), description: z.string(), line: z.number(),
  })),
  parameters: z.array(summaryParameter),
  inputs: z.array(z.object({
    name: z.string(), value: z.number(), unit: z.string(), interp: z.enum(['linear', 'hold']), delayed: z.boolean(), description: z.string(), line: z.number(),
  })),
  outputs: z.array(z.object({ name: z.string(), unit: z.string(), sigma: num, description: z.string(), line: z.number() })),
  consts: z.array(z.object({ name: z.string(), value: z.number(), unit: z.string(), line: z.number() })),
  lookups: z.array(z.object({ name: z.string(), points: z.number(), line: z.number() })),
  lets: z.number(),
  /** parts the sheet declares (library models at pinned versions) */
  parts: z.array(z.object({
    name: z.string(), handle: z.string(), version: z.number(), description: z.string(), line: z.number(),
    inputs: z.array(z.object({ name: z.string(), unit: z.string() })), outputs: z.array(z.object({ name: z.string(), unit: z.string() })),
  })).default([]),
  /** every part version the flattened sheet holds, directly or inside other parts */
  partsUsed: z.array(z.object({ handle: z.string(), version: z.number() })).default([]),
  /** switch positions the equations read (initial position: 0 off/closed, 1 on/open, or a whole number) */
  modes: z.array(z.object({ name: z.string(), initial: z.number(), description: z.string(), line: z.number() })).default([]),
  /** events: the condition as written, its direction, what it assigns */
  events: z.array(z.object({ condition: z.string(), direction: z.enum(['up', 'down', 'either']), assigns: z.array(z.string()), description: z.string(), line: z.number() })).default([]),
})
export type SheetSummary = z.infer<typeof sheetSummary>

export const emptySheetSummary = (): SheetSummary => ({
  title: '', kind: 'continuous', timeUnit: 's', sampleTime: null, states: [], parameters: [], inputs: [], outputs: [], consts: [], lookups: [], lets: 0, parts: [], partsUsed: [], modes: [], events: [],
})

export const checkBody = z.object({ text: sheetText })
export const checkReply = z.object({
  ok: z.boolean(),
  diagnostics: z.array(diagnosticDto),
  summary: sheetSummary.nullable(),
})
export type CheckReply = z.infer<typeof checkReply>

// ── people ──────────────────────────────────────────────────────────────────────────────────────
export const personDto = z.object({ id: z.number(), name: z.string(), email: z.string() })
export type PersonDto = z.infer<typeof personDto>

// ── review ──────────────────────────────────────────────────────────────────────────────────────
/** Where the review of a version not yet approved stands (null: nobody was asked). */
export const reviewStates = ['requested', 'changes-requested'] as const
export const reviewState = z.enum(reviewStates)
export type ReviewState = z.infer<typeof reviewState>
export const reviewActions = ['requested', 'approved', 'changes-requested'] as const
/** One step of a version's review history, with its comment. */
export const reviewEntryDto = z.object({
  action: z.enum(reviewActions),
  /** null when the account was deleted */
  by: personDto.nullable(),
  comment: z.string(),
  at: z.string(),
})
export type ReviewEntryDto = z.infer<typeof reviewEntryDto>

const reviewComment = z.string().trim().max(4000, 'a comment has at most 4000 characters')
/** POST …/versions/:n/review-request and …/approve: an optional comment */
export const reviewCommentBody = z.object({ comment: reviewComment.default('') })
export type ReviewCommentBody = z.infer<typeof reviewCommentBody>
/** POST …/versions/:n/request-changes: what should change */
export const requestChangesBody = z.object({ comment: reviewComment.min(1, 'say what should change before approval') })
export type RequestChangesBody = z.infer<typeof requestChangesBody>

// ── versions ────────────────────────────────────────────────────────────────────────────────────
/** A version without its text (lists, history). */
export const versionMetaDto = z.object({
  number: z.number(),
  note: z.string(),
  author: personDto,
  createdAt: z.string(),
  status: versionStatus,
  approvedBy: personDto.nullable(),
  approvedAt: z.string().nullable(),
  fromRunId: z.number().nullable(),
  review: reviewState.nullable().default(null),
  /** the review history, oldest first */
  reviews: z.array(reviewEntryDto).default([]),
})
export type VersionMetaDto = z.infer<typeof versionMetaDto>

export const versionDto = versionMetaDto.extend({
  modelId: z.number(),
  text: z.string(),
  summary: sheetSummary,
})
export type VersionDto = z.infer<typeof versionDto>

// ── models ──────────────────────────────────────────────────────────────────────────────────────
export const modelRefDto = z.object({ id: z.number(), slug: z.string(), title: z.string() })

export const modelListItemDto = z.object({
  id: z.number(),
  slug: z.string(),
  title: z.string(),
  description: z.string(),
  tags: z.array(z.string()),
  owner: personDto,
  template: z.string().nullable(),
  latestVersion: z.number(),
  status: versionStatus,
  updatedAt: z.string(),
  forkCount: z.number(),
  forkOf: modelRefDto.extend({ version: z.number() }).nullable(),
})
export type ModelListItemDto = z.infer<typeof modelListItemDto>

export const listModelsQuery = z.object({
  q: z.string().trim().max(200).optional(),
  tag: z.string().trim().toLowerCase().max(40).optional(),
  /** a user id, or `me` */
  owner: z.union([z.literal('me'), z.coerce.number().int().positive()]).optional(),
  status: versionStatus.optional(),
  page: z.coerce.number().int().min(1).default(1),
  pageSize: z.coerce.number().int().min(1).max(100).default(25),
})
export type ListModelsQuery = z.infer<typeof listModelsQuery>

export const listModelsReply = z.object({
  items: z.array(modelListItemDto),
  total: z.number(),
  page: z.number(),
  pageSize: z.number(),
  /** every tag used in the workspace's library (for the filter) */
  tags: z.array(z.string()),
  /** every owner of a model in the library (for the filter) */
  owners: z.array(personDto),
})
export type ListModelsReply = z.infer<typeof listModelsReply>

export const draftDto = z.object({
  text: z.string(),
  baseVersion: z.number(),
  updatedAt: z.string(),
})
export type DraftDto = z.infer<typeof draftDto>

export const forkDto = modelRefDto.extend({
  owner: personDto,
  /** the version of this model the fork was taken from */
  fromVersion: z.number(),
  createdAt: z.string(),
})
export type ForkDto = z.infer<typeof forkDto>

export const modelPermissions = z.object({
  publish: z.boolean(),
  approve: z.boolean(),
  fork: z.boolean(),
  edit: z.boolean(),
  remove: z.boolean(),
})

export const modelDetailDto = modelListItemDto.extend({
  createdAt: z.string(),
  maintainers: z.array(personDto),
  /** newest first */
  versions: z.array(versionMetaDto),
  forks: z.array(forkDto),
  /** the caller's working draft, when there is one */
  draft: draftDto.nullable(),
  /** what the caller may do with this model */
  can: modelPermissions,
  /** the origin's latest version number (forks only; null when the origin was deleted) */
  originLatestVersion: z.number().nullable(),
  /** model versions that use a version of this model as a part (lineage) */
  usedIn: z.array(z.object({ model: modelRefDto, version: z.number(), partVersion: z.number() })).default([]),
})
export type ModelDetailDto = z.infer<typeof modelDetailDto>

export const createModelBody = z.object({
  title: visibleText('the model title', 120, 'a model needs a title'),
  description: z.string().max(4000).default(''),
  tags: z.array(tag).max(12, 'at most 12 tags').default([]),
  text: sheetText.min(1, 'the sheet is empty'),
  note: z.string().trim().max(2000).default(''),
})
export type CreateModelBody = z.infer<typeof createModelBody>

export const updateModelBody = z.object({
  title: visibleText('the model title', 120, 'a model needs a title').optional(),
  description: z.string().max(4000).optional(),
  tags: z.array(tag).max(12, 'at most 12 tags').optional(),
}).refine((b) => b.title !== undefined || b.description !== undefined || b.tags !== undefined, { message: 'nothing to change: give title, description or tags' })
export type UpdateModelBody = z.infer<typeof updateModelBody>

export const setMaintainersBody = z.object({
  userIds: z.array(z.number().int().positive()).max(50),
})
export type SetMaintainersBody = z.infer<typeof setMaintainersBody>

export const saveDraftBody = z.object({
  text: sheetText,
  /** the version the draft started from (default: the latest) */
  baseVersion: z.number().int().positive().optional(),
})
export type SaveDraftBody = z.infer<typeof saveDraftBody>

export const publishBody = z.object({
  text: sheetText.min(1, 'the sheet is empty'),
  note: z.string().trim().min(1, 'a version needs a change note').max(2000),
  /** the version this text was edited from; must be the latest */
  baseVersion: z.number().int().positive(),
})
export type PublishBody = z.infer<typeof publishBody>

/** The details of a 409 reply to a publish on an old base. */
export const publishConflictDetails = z.object({
  latest: versionDto,
})

export const forkBody = z.object({
  /** the origin's version to fork (default: the latest) */
  version: z.number().int().positive().optional(),
  title: visibleText('the fork title', 120, 'a fork needs a title'),
})
export type ForkBody = z.infer<typeof forkBody>

// ── diffs ───────────────────────────────────────────────────────────────────────────────────────
const versionRef = z.union([z.literal('latest'), z.coerce.number().int().positive()])
export const diffQuery = z.object({
  from: versionRef,
  to: versionRef.default('latest'),
  /** take `from` from another model of the workspace (e.g. a fork's origin); default: this model */
  fromModel: z.coerce.number().int().positive().optional(),
})
export type DiffQuery = z.infer<typeof diffQuery>

export const diffLine = z.object({
  kind: z.enum(['same', 'added', 'removed']),
  text: z.string(),
  /** 1-based line in the old text (null for added lines) */
  oldLine: z.number().nullable(),
  /** 1-based line in the new text (null for removed lines) */
  newLine: z.number().nullable(),
})
export type DiffLine = z.infer<typeof diffLine>

export const parameterChangeFields = ['value', 'bounds', 'unit', 'fixed'] as const
export const parameterChange = z.object({
  name: z.string(),
  change: z.enum(['added', 'removed', 'changed']),
  /** for `changed`: which properties differ */
  fields: z.array(z.enum(parameterChangeFields)),
  before: summaryParameter.nullable(),
  after: summaryParameter.nullable(),
})
export type ParameterChange = z.infer<typeof parameterChange>

export const diffSide = z.object({ model: modelRefDto, version: z.number(), text: z.string() })
export const diffReply = z.object({
  from: diffSide,
  to: diffSide,
  lines: z.array(diffLine),
  added: z.number(),
  removed: z.number(),
  parameters: z.array(parameterChange),
})
export type DiffReply = z.infer<typeof diffReply>

export const deleteModelReply = z.object({ deleted: z.literal(true), id: z.number() })
export type DeleteModelReply = z.infer<typeof deleteModelReply>

// ── the review queue ────────────────────────────────────────────────────────────────────────────
/** GET /api/workspaces/:ws/reviews: versions awaiting review, oldest request first */
export const reviewQueueItem = z.object({
  model: modelRefDto,
  version: z.number(),
  note: z.string(),
  author: personDto,
  requestedBy: personDto.nullable(),
  requestedAt: z.string(),
  comment: z.string(),
  /** the caller wrote this version and the four-eyes rule applies: someone else approves it */
  ownWork: z.boolean(),
})
export type ReviewQueueItem = z.infer<typeof reviewQueueItem>
export const reviewQueueReply = z.object({ items: z.array(reviewQueueItem) })
export type ReviewQueueReply = z.infer<typeof reviewQueueReply>

/**
 * Datasets (uploaded measured traces) and bindings (model version + column mapping): request bodies and
 * reply shapes, shared by the server routes and the client.
 *
 * A dataset is immutable. Its time axis is stored in seconds from the first sample (or from the time
 * column's own zero when it is numeric); every other column keeps the values and unit of its header.
 * Conditioning makes a new dataset that records its parent and the steps applied.
 */
import { z } from 'zod'
import { visibleText } from './text'

export const datasetPurpose = z.enum(['estimation', 'validation'])
export type DatasetPurpose = z.infer<typeof datasetPurpose>

export const columnStats = z.object({
  count: z.number(),
  missing: z.number(),
  min: z.number().nullable(),
  max: z.number().nullable(),
  mean: z.number().nullable(),
  std: z.number().nullable(),
})
export type ColumnStats = z.infer<typeof columnStats>

export const columnMeta = z.object({
  /** the column's name (header without the unit) */
  name: z.string(),
  /** the header as written */
  header: z.string(),
  /** unit from the header (`temp [degC]` → degC), '' when none */
  unit: z.string(),
  stats: columnStats,
})
export type ColumnMeta = z.infer<typeof columnMeta>

/** A column as dataset lists show it: no statistics (GET of one dataset has them). */
export const columnSummary = columnMeta.omit({ stats: true })
export type ColumnSummary = z.infer<typeof columnSummary>

export const datasetWarning = z.object({
  message: z.string(),
  row: z.number().optional(),
  column: z.string().optional(),
})
export type DatasetWarning = z.infer<typeof datasetWarning>

/** most exclusion windows one conditioning step may list */
export const MAX_EXCLUDE_WINDOWS = 1000

/**
 * The window cap checked on the raw body before the schema walks every window (a body of 100 000 windows
 * is refused at once): the message, or null.
 */
export function tooManyWindows(body: unknown): string | null {
  const steps = (body as { steps?: unknown } | null)?.steps
  if (!Array.isArray(steps)) return null
  for (let i = 0; i < steps.length; i++) {
    const w = (steps[i] as { windows?: unknown } | null)?.windows
    if (Array.isArray(w) && w.length > MAX_EXCLUDE_WINDOWS) return `steps.${i}.windows: ${w.length} windows; at most ${MAX_EXCLUDE_WINDOWS} exclusion windows per step`
  }
  return null
}

export const conditioningStep = z.discriminatedUnion('op', [
  z.object({ op: z.literal('trim'), from: z.number(), to: z.number() }),
  z.object({
    op: z.literal('exclude'),
    windows: z.array(z.tuple([z.number(), z.number()])).min(1, 'give at least one window [from, to]').max(MAX_EXCLUDE_WINDOWS, `at most ${MAX_EXCLUDE_WINDOWS} exclusion windows per step`),
    /** columns to blank in the windows (default: all) */
    columns: z.array(z.string()).optional(),
  }),
  z.object({ op: z.literal('resample'), step: z.number().positive('the step must be positive') }),
  z.object({
    op: z.literal('offset'),
    mode: z.enum(['initial', 'mean']),
    columns: z.array(z.string()).min(1, 'name the columns to shift'),
  }),
  z.object({
    op: z.literal('outliers'),
    /** Hampel filter: half-width of the moving window in samples */
    halfWindow: z.number().int().min(1).max(500).default(5),
    /** modified z-score threshold (3.5 after Iglewicz & Hoaglin) */
    threshold: z.number().positive().default(3.5),
    columns: z.array(z.string()).optional(),
  }),
])
export type ConditioningStep = z.infer<typeof conditioningStep>

/** A step as stored: the request plus what it did (offsets subtracted, samples marked …). */
export const appliedStep = z.object({
  step: conditioningStep,
  summary: z.string(),
  details: z.record(z.string(), z.unknown()).optional(),
})
export type AppliedStep = z.infer<typeof appliedStep>

export const conditionBody = z.object({
  name: visibleText('the dataset name', 200).optional(),
  steps: z.array(conditioningStep).min(1, 'give at least one conditioning step').max(20),
  purpose: datasetPurpose.nullable().optional(),
})
export type ConditionBody = z.infer<typeof conditionBody>

export const updateDatasetBody = z.object({
  purpose: datasetPurpose.nullable().optional(),
  name: visibleText('the dataset name', 200).optional(),
})
export type UpdateDatasetBody = z.infer<typeof updateDatasetBody>

export const datasetSummaryDto = z.object({
  id: z.number(),
  projectId: z.number(),
  name: z.string(),
  filename: z.string(),
  purpose: datasetPurpose.nullable(),
  contentHash: z.string(),
  rowCount: z.number(),
  columns: z.array(columnSummary),
  warnings: z.array(datasetWarning),
  parentId: z.number().nullable(),
  steps: z.array(appliedStep),
  /** start and end of the time axis, seconds */
  timeSpan: z.tuple([z.number(), z.number()]).nullable(),
  createdAt: z.string(),
  createdBy: z.number().nullable(),
})
export type DatasetSummaryDto = z.infer<typeof datasetSummaryDto>

/** GET …/datasets and …/projects/:pid/datasets */
export const datasetListReply = z.object({ datasets: z.array(datasetSummaryDto) })

export const datasetDto = datasetSummaryDto.extend({
  /** every column with its statistics */
  columns: z.array(columnMeta),
  /** the time column's header and unit as uploaded */
  time: z.object({ header: z.string(), unit: z.string(), format: z.enum(['numeric', 'iso8601']) }),
  /** the first rows: [t_seconds, ...values in column order] */
  preview: z.array(z.array(z.number().nullable())),
  /** invented-data notes and other comment lines (`# …`) at the top of the file */
  notes: z.array(z.string()),
})
export type DatasetDto = z.infer<typeof datasetDto>

/** GET …/datasets/:did/data: every sample, optionally thinned to at most `maxPoints` for plotting. */
export const datasetDataDto = z.object({
  t: z.array(z.number()),
  columns: z.record(z.string(), z.array(z.number().nullable())),
  thinned: z.boolean(),
})
export type DatasetDataDto = z.infer<typeof datasetDataDto>

// ── bindings ────────────────────────────────────────────────────────────────────────────────────
/** Sheet input/output name → dataset column name (null or missing: not bound). */
export const columnMapping = z.object({
  inputs: z.record(z.string(), z.string().nullable()).default({}),
  outputs: z.record(z.string(), z.string().nullable()).default({}),
})
export type ColumnMapping = z.infer<typeof columnMapping>

/** Which version a fit of a binding takes by default: the pinned one, the latest, or the newest approved. */
export const bindingFollows = ['pinned', 'latest', 'approved'] as const
export const bindingFollow = z.enum(bindingFollows)
export type BindingFollow = z.infer<typeof bindingFollow>

export const createBindingBody = z.object({
  modelId: z.coerce.number().int().positive(),
  version: z.coerce.number().int().positive(),
  follow: bindingFollow.default('pinned'),
  name: visibleText('the binding name', 200).optional(),
  /** omitted: matched automatically against `datasetId`'s columns */
  mapping: columnMapping.optional(),
  /** the dataset whose columns the automatic match uses (default: the project's newest) */
  datasetId: z.coerce.number().int().positive().optional(),
})
export type CreateBindingBody = z.infer<typeof createBindingBody>

export const updateBindingBody = z.object({
  name: visibleText('the binding name', 200).optional(),
  /** entries replace the binding's; signals left out keep their columns */
  mapping: columnMapping.optional(),
  /** the pinned version (its signals check the mapping) */
  version: z.coerce.number().int().positive().optional(),
  follow: bindingFollow.optional(),
}).refine((b) => b.name !== undefined || b.mapping !== undefined || b.version !== undefined || b.follow !== undefined, { message: 'nothing to change: give name, mapping, version or follow' })
export type UpdateBindingBody = z.infer<typeof updateBindingBody>

/** How one sheet signal meets its column: the unit conversion applied, or why it fails. */
export const mappingCheck = z.object({
  kind: z.enum(['input', 'output']),
  signal: z.string(),
  sheetUnit: z.string(),
  column: z.string().nullable(),
  columnUnit: z.string().nullable(),
  /** internal (SI) = column value * scale + offset */
  scale: z.number().nullable(),
  offset: z.number().nullable(),
  problem: z.string().nullable(),
})
export type MappingCheck = z.infer<typeof mappingCheck>

export const bindingDto = z.object({
  id: z.number(),
  projectId: z.number(),
  modelId: z.number(),
  modelTitle: z.string(),
  /** the pinned version */
  modelVersion: z.number(),
  follow: bindingFollow.default('pinned'),
  /** the version a fit takes by default now (null: follows approved versions and none is approved) */
  resolvedVersion: z.number().nullable(),
  name: z.string(),
  mapping: columnMapping,
  /** the mapping against the resolved version's signals (the pinned one's when none resolves) */
  checks: z.array(mappingCheck),
  createdAt: z.string(),
})
export type BindingDto = z.infer<typeof bindingDto>

/** GET …/projects/:pid/bindings */
export const bindingListReply = z.object({ bindings: z.array(bindingDto) })

/** POST …/projects/:pid/bindings/match: the automatic mapping for a model version and a dataset. */
export const matchBody = z.object({
  modelId: z.coerce.number().int().positive(),
  version: z.coerce.number().int().positive(),
  datasetId: z.coerce.number().int().positive(),
  mapping: columnMapping.optional(),
})
/** its reply: the mapping and how each signal meets its column */
export const matchReply = z.object({ mapping: columnMapping, checks: z.array(mappingCheck) })
export type MatchReply = z.infer<typeof matchReply>

/** What an upload may hold, stated in the upload form and checked there before a file is sent. */
export const uploadLimits = z.object({
  /** largest file, bytes (PEWTER_UPLOAD_LIMIT_BYTES) */
  uploadBytes: z.number().int().positive(),
  /** most data rows */
  rows: z.number().int().positive(),
  /** most columns, the time column included */
  columns: z.number().int().positive(),
})
export type UploadLimits = z.infer<typeof uploadLimits>

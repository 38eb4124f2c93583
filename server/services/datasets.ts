/**
 * Datasets: uploaded CSV traces, stored in PostgreSQL with the original file (nothing uploaded is lost),
 * a content hash, column metadata with statistics, and the parsed samples. A dataset is immutable;
 * conditioning (services/conditioning) makes a child dataset that records its parent and the steps.
 *
 * Upload: the bytes are checked here (upload-checks: binary, UTF-16, not UTF-8, named by line and
 * column; leading `#` comment lines kept as notes), then parsed by the shared CSV reader
 * (shared/data/csv.ts: delimiter and decimal comma, header units, time column, row/column errors),
 * then checked for the row limit.
 */
import { createHash } from 'node:crypto'
import { and, desc, eq, sql } from 'drizzle-orm'
import type { Db } from '../db/client'
import { datasets } from '../db/schema'
import { badRequest, notFound } from '../errors'
import type {
  AppliedStep, ColumnMeta, ColumnStats, ColumnSummary, ConditionBody, DatasetDataDto, DatasetDto, DatasetPurpose, DatasetSummaryDto,
  DatasetWarning, UpdateDatasetBody,
} from '../../shared/api/datasets'
import { decodeUpload } from './upload-checks'
import { applySteps, ConditioningError, type Table } from './conditioning'
import { getProjectRow } from './projects'
import { readTraceCsv } from './csv-reader'

export const DEFAULT_MAX_ROWS = 500_000
const PREVIEW_ROWS = 20

type DatasetRow = typeof datasets.$inferSelect

/** The stored numeric content of a dataset (the `data` jsonb). */
export interface StoredData {
  time: number[]
  columns: Record<string, (number | null)[]>
}

interface TimeMeta { header: string; unit: string; format: 'numeric' | 'iso8601' }
interface StoredColumns { time: TimeMeta; columns: ColumnMeta[]; notes: string[] }

export function columnStats(v: (number | null)[]): ColumnStats {
  let count = 0
  let sum = 0
  let min = Infinity
  let max = -Infinity
  for (const x of v) {
    if (x === null || !Number.isFinite(x)) continue
    count++
    sum += x
    if (x < min) min = x
    if (x > max) max = x
  }
  if (!count) return { count: 0, missing: v.length, min: null, max: null, mean: null, std: null }
  const mean = sum / count
  let ss = 0
  for (const x of v) if (x !== null && Number.isFinite(x)) ss += (x - mean) * (x - mean)
  return { count, missing: v.length - count, min, max, mean, std: count > 1 ? Math.sqrt(ss / (count - 1)) : 0 }
}

/**
 * Sample spacing warnings: a gap more than 5× the median step (common practice, no source). `rows`: the
 * file row of each sample (uploads); without it the sample number is given.
 */
export function gapWarnings(time: number[], rows?: number[]): DatasetWarning[] {
  if (time.length < 3) return []
  const d = time.slice(1).map((t, i) => t - time[i]).sort((a, b) => a - b)
  const med = d[d.length >> 1]
  const out: DatasetWarning[] = []
  for (let k = 1; k < time.length; k++) {
    const dt = time[k] - time[k - 1]
    if (med > 0 && dt > 5 * med) {
      if (out.length < 20) out.push({ row: rows ? rows[k] : k + 1, column: 'time', message: `gap of ${fmt(dt)} s between ${fmt(time[k - 1])} s and ${fmt(time[k])} s (the usual step is ${fmt(med)} s)` })
      else { out.push({ message: 'more gaps not listed' }); break }
    }
  }
  return out
}

const fmt = (v: number) => String(Number(v.toPrecision(6)))
const iso = (d: Date | string | null) => (d === null ? null : new Date(d).toISOString())

type SummaryRow = Omit<DatasetRow, 'workspaceId' | 'original' | 'data' | 'columns'> & { columns: ColumnSummary[] }

function summaryOf(r: SummaryRow, timeSpan: [number, number] | null): DatasetSummaryDto {
  return {
    id: r.id, projectId: r.projectId, name: r.name, filename: r.filename, purpose: (r.purpose as DatasetPurpose | null) ?? null,
    contentHash: r.contentHash, rowCount: r.rowCount, columns: r.columns, warnings: r.warnings as DatasetWarning[],
    parentId: r.parentId, steps: r.steps as AppliedStep[], timeSpan, createdAt: iso(r.createdAt)!, createdBy: r.createdBy,
  }
}

function fullDto(r: DatasetRow): DatasetDto {
  const meta = r.columns as unknown as StoredColumns
  const data = r.data as StoredData
  const preview: (number | null)[][] = []
  for (let k = 0; k < Math.min(PREVIEW_ROWS, data.time.length); k++) preview.push([data.time[k], ...meta.columns.map((c) => data.columns[c.name][k])])
  const timeSpan: [number, number] | null = data.time.length ? [data.time[0], data.time[data.time.length - 1]] : null
  return { ...summaryOf({ ...r, columns: meta.columns }, timeSpan), columns: meta.columns, time: meta.time, preview, notes: meta.notes }
}

/** Column metadata as the bindings and the fit read it (the `columns` jsonb holds more). */
export function columnsOf(r: { columns: unknown }): ColumnMeta[] {
  return (r.columns as StoredColumns).columns
}

function contentHash(bytes: Uint8Array) {
  return createHash('sha256').update(bytes).digest('hex')
}

export interface UploadedFile { buffer: Buffer; originalname: string }

export async function uploadDataset(
  db: Db, workspaceId: number, projectId: number, userId: number, file: UploadedFile,
  opts: { name?: string; purpose?: DatasetPurpose | null; maxRows?: number } = {},
): Promise<DatasetDto> {
  await getProjectRow(db, workspaceId, projectId)
  const filename = (file.originalname || 'upload.csv').slice(0, 255)
  const decoded = decodeUpload(file.buffer, filename)
  const parsed = readTraceCsv(decoded.text, { filename, lineOffset: decoded.skippedLines, maxRows: opts.maxRows ?? DEFAULT_MAX_ROWS })
  const columns: ColumnMeta[] = parsed.columns.map((c) => ({ name: c.name, header: c.header, unit: c.unit, stats: columnStats(c.values) }))
  const warnings: DatasetWarning[] = [...parsed.warnings, ...gapWarnings(parsed.time, parsed.rows)]
  for (const c of columns) if (c.stats.missing > 0 && c.stats.count > 0) warnings.push({ column: c.name, message: `${c.stats.missing} empty cell(s) in column '${c.name}': the fit skips them` })
  const data: StoredData = { time: parsed.time, columns: Object.fromEntries(parsed.columns.map((c) => [c.name, c.values])) }
  const stored: StoredColumns = { time: parsed.timeMeta, columns, notes: decoded.notes }
  const name = opts.name?.trim() || filename.replace(/\.(csv|txt)$/i, '')
  const [row] = await db.insert(datasets).values({
    workspaceId, projectId, name, filename, purpose: opts.purpose ?? null, contentHash: contentHash(file.buffer), original: file.buffer,
    columns: stored, data, rowCount: parsed.time.length, warnings, createdBy: userId,
  }).returning()
  return fullDto(row)
}

export async function getDatasetRow(db: Db, workspaceId: number, datasetId: number): Promise<DatasetRow> {
  const [r] = await db.select().from(datasets).where(and(eq(datasets.id, datasetId), eq(datasets.workspaceId, workspaceId))).limit(1)
  if (!r) throw notFound('Dataset')
  return r
}

export async function getDataset(db: Db, workspaceId: number, datasetId: number): Promise<DatasetDto> {
  return fullDto(await getDatasetRow(db, workspaceId, datasetId))
}

export async function getOriginal(db: Db, workspaceId: number, datasetId: number) {
  const r = await getDatasetRow(db, workspaceId, datasetId)
  return { filename: r.filename, bytes: r.original, contentHash: r.contentHash }
}

/** Every sample, or at most `maxPoints` of them (evenly thinned, first and last kept) for plotting. */
export async function getDatasetData(db: Db, workspaceId: number, datasetId: number, maxPoints?: number): Promise<DatasetDataDto> {
  const r = await getDatasetRow(db, workspaceId, datasetId)
  const data = r.data as StoredData
  const n = data.time.length
  if (!maxPoints || n <= maxPoints) return { t: data.time, columns: data.columns, thinned: false }
  const idx: number[] = []
  const step = (n - 1) / (maxPoints - 1)
  for (let i = 0; i < maxPoints; i++) idx.push(Math.round(i * step))
  const columns: DatasetDataDto['columns'] = {}
  for (const [k, v] of Object.entries(data.columns)) columns[k] = idx.map((i) => v[i])
  return { t: idx.map((i) => data.time[i]), columns, thinned: true }
}

export async function listDatasets(db: Db, workspaceId: number, projectId?: number): Promise<DatasetSummaryDto[]> {
  if (projectId) await getProjectRow(db, workspaceId, projectId)
  const cond = projectId ? and(eq(datasets.workspaceId, workspaceId), eq(datasets.projectId, projectId)) : eq(datasets.workspaceId, workspaceId)
  // a summary per dataset: column names and units without their statistics, steps without their details
  // (outlier rows), and no samples (so no time span); the database does the projection
  const rows = await db.select({
    id: datasets.id, projectId: datasets.projectId, name: datasets.name, filename: datasets.filename, purpose: datasets.purpose,
    contentHash: datasets.contentHash, rowCount: datasets.rowCount, warnings: datasets.warnings, parentId: datasets.parentId,
    columns: sql<ColumnSummary[]>`coalesce((select jsonb_agg(jsonb_build_object('name', c->'name', 'header', c->'header', 'unit', c->'unit')) from jsonb_array_elements(${datasets.columns}->'columns') c), '[]'::jsonb)`,
    steps: sql<AppliedStep[]>`coalesce((select jsonb_agg(s - 'details') from jsonb_array_elements(${datasets.steps}) s), '[]'::jsonb)`,
    createdAt: datasets.createdAt, createdBy: datasets.createdBy,
  }).from(datasets).where(cond).orderBy(desc(datasets.createdAt), desc(datasets.id))
  return rows.map((r) => summaryOf(r, null))
}

/** Labels only (name, estimation/validation mark); the samples never change. */
export async function updateDataset(db: Db, workspaceId: number, datasetId: number, body: UpdateDatasetBody): Promise<DatasetDto> {
  await getDatasetRow(db, workspaceId, datasetId)
  const set: Partial<typeof datasets.$inferInsert> = {}
  if (body.purpose !== undefined) set.purpose = body.purpose
  if (body.name !== undefined) set.name = body.name
  if (!Object.keys(set).length) return getDataset(db, workspaceId, datasetId)
  const [r] = await db.update(datasets).set(set).where(eq(datasets.id, datasetId)).returning()
  return fullDto(r)
}

/** A new dataset from a parent and conditioning steps; the parent is left as it was. */
export async function conditionDataset(db: Db, workspaceId: number, datasetId: number, userId: number, body: ConditionBody): Promise<DatasetDto> {
  const parent = await getDatasetRow(db, workspaceId, datasetId)
  const meta = parent.columns as unknown as StoredColumns
  const data = parent.data as StoredData
  const table: Table = { time: data.time, columns: data.columns, order: meta.columns.map((c) => c.name) }
  let result: ReturnType<typeof applySteps>
  try {
    result = applySteps(table, body.steps)
  } catch (e) {
    if (e instanceof ConditioningError) throw badRequest(e.message)
    throw e
  }
  const t = result.table
  const columns: ColumnMeta[] = meta.columns.map((c) => ({ ...c, stats: columnStats(t.columns[c.name]) }))
  const warnings = gapWarnings(t.time)
  const steps = [...(parent.steps as AppliedStep[]), ...result.applied]
  const stored: StoredColumns = { ...meta, columns }
  const newData: StoredData = { time: t.time, columns: t.columns }
  const hash = createHash('sha256').update(JSON.stringify(newData)).digest('hex')
  const [row] = await db.insert(datasets).values({
    workspaceId, projectId: parent.projectId, name: body.name?.trim() || `${parent.name} (conditioned)`, filename: parent.filename,
    purpose: body.purpose !== undefined ? body.purpose : parent.purpose, contentHash: hash, original: parent.original,
    columns: stored, data: newData, rowCount: t.time.length, warnings, parentId: parent.id, steps, createdBy: userId,
  }).returning()
  return fullDto(row)
}

/**
 * The CPU-heavy steps of requests, sent to the request pool's worker threads (jobs/request-pool.ts) with
 * its time limit: compiling a sheet for a run, reading an uploaded CSV (and storing it), conditioning a
 * dataset (the hand-over's analysis and exports go there from services/handover.ts). A context without a pool (scripts) does the work in place.
 */
import type { AppContext } from '../context'
import { RequestPool } from '../jobs/request-pool'
import type { ConditionTask, SheetMeta, UploadTask } from '../jobs/request-tasks'
import type { DatasetDto } from '../../shared/api/datasets'
import { compileModel, SheetError } from '../../shared/sheet'
import { partsResolver } from '../../shared/sheet/parts'
import { badRequest } from '../errors'
import { conditionDataset, uploadDataset } from './datasets'

/** `parts`: the texts of the parts the sheet uses, keyed `handle@version` (workspacePartTexts) */
export type SheetCompiler = (text: string, label: string, parts?: Record<string, string>) => Promise<SheetMeta>

export function requestPoolOf(context: AppContext): RequestPool | null {
  const p = context.services.requests
  return p instanceof RequestPool ? p : null
}

/** Compiles in place (no pool: the demo seed, scripts). */
export const compileHere: SheetCompiler = async (text, label, parts) => {
  try {
    const m = compileModel(text, { resolvePart: partsResolver(parts) })
    return { params: m.params, states: m.states }
  } catch (e) {
    if (e instanceof SheetError) throw badRequest(`${label} has errors and cannot be fitted: ${e.message}`, e.diagnostics)
    throw e
  }
}

export function sheetCompiler(context: AppContext): SheetCompiler {
  const pool = requestPoolOf(context)
  if (!pool) return compileHere
  return (text, label, parts) => pool.run<SheetMeta>('compileSheet', { text, label, parts }, `Compiling ${label}`)
}

type UploadArgs = Omit<UploadTask, 'port' | 'databaseUrl'>

export async function uploadOffLoop(context: AppContext, a: UploadArgs): Promise<DatasetDto> {
  const pool = requestPoolOf(context)
  if (!pool) return uploadDataset(context.db, a.workspaceId, a.projectId, a.userId, { buffer: Buffer.from(a.bytes), originalname: a.filename }, { name: a.name, purpose: a.purpose, maxRows: a.maxRows })
  // a copy of the bytes is moved (not cloned) to the thread
  const bytes = Uint8Array.prototype.slice.call(a.bytes)
  return pool.run<DatasetDto>('upload', { ...a, bytes, databaseUrl: context.config.databaseUrl }, `Reading ${a.filename}`, [bytes.buffer as ArrayBuffer])
}

type ConditionArgs = Omit<ConditionTask, 'port' | 'databaseUrl'>

export async function conditionOffLoop(context: AppContext, a: ConditionArgs): Promise<DatasetDto> {
  const pool = requestPoolOf(context)
  if (!pool) return conditionDataset(context.db, a.workspaceId, a.datasetId, a.userId, a.body)
  return pool.run<DatasetDto>('condition', { ...a, databaseUrl: context.config.databaseUrl }, `Conditioning dataset ${a.datasetId}`)
}

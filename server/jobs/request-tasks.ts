/**
 * Tasks of the request pool (request-pool.ts), run in a worker thread (compiling a sheet for a run,
 * reading and conditioning datasets, the hand-over's linear analysis and exports): each receives plain data and a
 * MessagePort (told `{ started: true }` so the time limit counts from here), and returns a
 * RequestOutcome. Database work is done here too, on the thread's own connection, so that neither the
 * parsed samples nor their JSON ever pass through the event loop of the web process.
 */
import type { MessagePort } from 'node:worker_threads'
import { partsResolver } from '../../shared/sheet/parts'
import { openDatabase, type Database } from '../db/client'
import { HttpError } from '../errors'
import { errorCodes } from '../../shared/api/errors'
import { compileModel, SheetError } from '../../shared/sheet'
import type { CompiledModel } from '../../shared/sheet/compiled'
import { conditionDataset, uploadDataset } from '../services/datasets'
import type { ConditionBody, DatasetDto, DatasetPurpose } from '../../shared/api/datasets'
import type { ExportBody, HandoverBody, LinearAnalysis } from '../../shared/api/handover'
import type { ExportFile } from '../../shared/export'
import { exportLoaded, linearizeLoaded, type HandoverInput } from '../services/handover-analysis'

export type RequestOutcome<T> = { ok: true; value: T } | { ok: false; status: number; code: string; message: string; details?: unknown }

/** What a run needs to know about its sheet before it is queued (no functions: they stay in the thread). */
export type SheetMeta = Pick<CompiledModel, 'params' | 'states'>

interface Base { port: MessagePort }

const databases = new Map<string, Database>()
function database(url: string) {
  let d = databases.get(url)
  if (!d) {
    d = openDatabase(url, 2)
    databases.set(url, d)
  }
  return d.db
}

async function outcome<T>(task: Base, work: () => Promise<T> | T): Promise<RequestOutcome<T>> {
  task.port.postMessage({ started: true })
  try {
    return { ok: true, value: await work() }
  } catch (e) {
    if (e instanceof HttpError) return { ok: false, status: e.status, code: e.code, message: e.message, details: e.details }
    throw e
  } finally {
    task.port.close()
  }
}

/** Compiles a sheet (code generation included) and returns its parameters and states. */
export function compileSheet(task: Base & { text: string; label: string; parts?: Record<string, string> }): Promise<RequestOutcome<SheetMeta>> {
  return outcome(task, () => {
    try {
      const m = compileModel(task.text, { resolvePart: partsResolver(task.parts) })
      return { params: m.params, states: m.states }
    } catch (e) {
      if (e instanceof SheetError) throw new HttpError(400, errorCodes.badRequest, `${task.label} has errors and cannot be fitted: ${e.message}`, e.diagnostics)
      throw e
    }
  })
}

export interface UploadTask extends Base {
  databaseUrl: string
  workspaceId: number
  projectId: number
  userId: number
  bytes: Uint8Array
  filename: string
  name?: string
  purpose: DatasetPurpose | null
  maxRows: number
}

export function upload(task: UploadTask): Promise<RequestOutcome<DatasetDto>> {
  return outcome(task, () => uploadDataset(database(task.databaseUrl), task.workspaceId, task.projectId, task.userId,
    { buffer: Buffer.from(task.bytes.buffer, task.bytes.byteOffset, task.bytes.byteLength), originalname: task.filename },
    { name: task.name, purpose: task.purpose, maxRows: task.maxRows }))
}

export interface ConditionTask extends Base {
  databaseUrl: string
  workspaceId: number
  datasetId: number
  userId: number
  body: ConditionBody
}

export function condition(task: ConditionTask): Promise<RequestOutcome<DatasetDto>> {
  return outcome(task, () => conditionDataset(database(task.databaseUrl), task.workspaceId, task.datasetId, task.userId, task.body))
}

export type HandoverTask = Base & ({ kind: 'linearize'; input: HandoverInput; body: HandoverBody } | { kind: 'export'; input: HandoverInput; body: ExportBody })

/** The hand-over analysis or export of a version loaded by services/handover.ts. */
export function handover(task: HandoverTask): Promise<RequestOutcome<LinearAnalysis | ExportFile>> {
  return outcome(task, () => (task.kind === 'linearize' ? linearizeLoaded(task.input, task.body) : exportLoaded(task.input, task.body as ExportBody)))
}

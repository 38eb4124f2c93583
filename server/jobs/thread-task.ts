/**
 * Runs inside a worker thread of the pool (piscina loads this file under tsx), with its own database
 * connection, so a fit never blocks the event loop of the web or worker process. Imports here stay
 * static: in a Node 20 worker thread tsx may only have its require hook, under which a dynamic
 * import() of an extensionless TypeScript path does not resolve.
 *
 * - default export: executes one run; the parent sends `{ abort: reason }` on the task's MessagePort
 *   to cancel it cooperatively. Its multi-start plans are shared with helper threads (fan-out.ts).
 * - `helper`: lends this thread to another run's multi-start fit, fitting plans until none is left.
 * - `landscape`: the cost over a grid of two estimated quantities of a finished run (results page).
 */
import { threadId, type MessagePort } from 'node:worker_threads'
import { openDatabase, type Database } from '../db/client'
import { loadExecutor, type RunExecutor } from './executor'
import { alsoAbortedWhen, flagRaised, type AbortFlag } from './abort-flag'
import { fitSharedPlans, helperProgress, planRequests, threadRunStarts } from './fan-out'
import { deadlineOf, fitPlan } from './start-fits'
import { runs } from '../db/schema'
import { eq } from 'drizzle-orm'
import { computeLandscape, RunInputError } from '../services/fit-execution'
import type { LandscapeResult } from '../../shared/api/fit'
import type { StartPlan } from '../../shared/engine/fit/driver'

export interface RunTask {
  runId: number
  databaseUrl: string
  workerId: string
  executorUrl: string
  port: MessagePort
  /** raised by the pool on cancel or timeout (abort-flag.ts) */
  abortFlag?: AbortFlag
}

export interface LandscapeTask {
  runId: number
  databaseUrl: string
  a: string
  b: string
  n: number
}

/** Errors cross the thread boundary as values: an input problem (→ 400) or another failure. */
export type LandscapeOutcome = { ok: true; landscape: LandscapeResult } | { ok: false; input: boolean; message: string }

export interface HelperTask {
  runId: number
  databaseUrl: string
  deadline: number | null
  port: MessagePort
  abortFlag?: AbortFlag
}

const databases = new Map<string, Database>()
const executors = new Map<string, Promise<RunExecutor>>()

function database(url: string) {
  let d = databases.get(url)
  if (!d) {
    d = openDatabase(url, 3)
    databases.set(url, d)
  }
  return d
}

function abortable(port: MessagePort, flag?: AbortFlag) {
  const controller = new AbortController()
  port.on('message', (m: { abort?: string }) => { if (m?.abort) controller.abort(new Error(m.abort)) })
  // seen at once inside synchronous simulations, where the message above waits for the next await
  alsoAbortedWhen(controller.signal, flagRaised(flag))
  return controller
}

export default async function runTask(task: RunTask): Promise<{ ok: true }> {
  const db = database(task.databaseUrl)
  let exec = executors.get(task.executorUrl)
  if (!exec) {
    exec = loadExecutor(task.executorUrl)
    executors.set(task.executorUrl, exec)
  }
  const controller = abortable(task.port, task.abortFlag)
  let deadline: number | null = null
  const runStarts = threadRunStarts(task.port, (plan, onProgress) => fitPlan(db.db, task.runId, plan, deadline, controller.signal, onProgress), threadId, () => deadline)
  try {
    await (await exec)(db.db, task.runId, {
      signal: controller.signal,
      workerId: task.workerId,
      runStarts: async (plans, onProgress, onStartFinished) => {
        const [row] = await db.db.select({ settings: runs.settings }).from(runs).where(eq(runs.id, task.runId))
        deadline = deadlineOf(row?.settings)
        return runStarts(plans, onProgress, onStartFinished)
      },
    })
    return { ok: true }
  } finally {
    task.port.close()
  }
}

export async function helper(task: HelperTask): Promise<{ fitted: number }> {
  const db = database(task.databaseUrl)
  const controller = abortable(task.port, task.abortFlag)
  const requests = planRequests(task.port)
  task.port.on('message', (m: { type?: string; plan?: StartPlan | null }) => { if (m?.type === 'plan') requests.deliver(m.plan ?? null) })
  try {
    const progress = helperProgress(task.port)
    const fitted = await fitSharedPlans(task.port, requests.next, (plan) => fitPlan(db.db, task.runId, plan, task.deadline, controller.signal, progress), threadId, () => controller.signal.aborted)
    return { fitted }
  } finally {
    task.port.close()
  }
}

export async function landscape(task: LandscapeTask): Promise<LandscapeOutcome> {
  const db = database(task.databaseUrl)
  try {
    const [row] = await db.db.select().from(runs).where(eq(runs.id, task.runId)).limit(1)
    if (!row || row.status !== 'succeeded' || !row.result) return { ok: false, input: true, message: `Run ${task.runId} has no result` }
    return { ok: true, landscape: await computeLandscape(db.db, row, task.a, task.b, task.n) }
  } catch (e) {
    const message = e instanceof Error ? e.message : String(e)
    return { ok: false, input: e instanceof RunInputError || /landscape/.test(message), message }
  }
}

/** Warm-up: boots the thread (module loading) and reports its id; held briefly so parallel pings land on distinct threads. */
export async function ping(): Promise<number> {
  await new Promise((r) => setTimeout(r, 200))
  return threadId
}
// the request pool's tasks (request-pool.ts) load through this same entry
export { compileSheet, upload, condition, handover } from './request-tasks'

/**
 * Runs inside a worker thread of the pool (piscina loads this file under tsx): executes one run with
 * its own database connection, so the fit never blocks the event loop of the web or worker process.
 * The parent sends `{ abort: reason }` on the task's MessagePort to cancel it cooperatively.
 */
import type { MessagePort } from 'node:worker_threads'
import { openDatabase, type Database } from '../db/client'
import { loadExecutor, type RunExecutor } from './executor'

export interface RunTask {
  runId: number
  databaseUrl: string
  workerId: string
  executorUrl: string
  port: MessagePort
}

const databases = new Map<string, Database>()
const executors = new Map<string, Promise<RunExecutor>>()

export default async function runTask(task: RunTask): Promise<{ ok: true }> {
  let database = databases.get(task.databaseUrl)
  if (!database) {
    database = openDatabase(task.databaseUrl, 3)
    databases.set(task.databaseUrl, database)
  }
  let exec = executors.get(task.executorUrl)
  if (!exec) {
    exec = loadExecutor(task.executorUrl)
    executors.set(task.executorUrl, exec)
  }
  const controller = new AbortController()
  task.port.on('message', (m: { abort?: string }) => { if (m?.abort) controller.abort(new Error(m.abort)) })
  try {
    await (await exec)(database.db, task.runId, { signal: controller.signal, workerId: task.workerId })
    return { ok: true }
  } finally {
    task.port.close()
  }
}

/**
 * A stand-in for executeRun used by the job tests: it behaves like a CPU-bound fit (each step spins the
 * CPU synchronously for `stepMs`, so it would freeze an event loop it ran on), writes progress to the
 * run row, polls the cancel flag and the abort signal, records every execution in `test_executions`
 * (so a test can prove a run was executed once), and stores a result whose value is computed from the
 * run's settings: sum of squares 1..steps (n(n+1)(2n+1)/6, checked by the tests).
 */
import { eq, sql } from 'drizzle-orm'
import type { Db } from '../../server/db/client'
import { runs } from '../../server/db/schema'
import type { ExecuteOptions } from '../../server/jobs/executor'

export interface TestSettings {
  steps: number
  stepMs: number
  failAt?: number
  ignoreCancel?: boolean
  /** the spin reads the abort signal synchronously, as the engine's solvers do at every step */
  checkSignalInStep?: boolean
}

function spin(ms: number, signal?: AbortSignal) {
  const end = performance.now() + ms
  let x = 0
  while (performance.now() < end && !signal?.aborted) x += Math.sqrt(x + 1)
  return x
}

export async function executeRun(db: Db, runId: number, opts: ExecuteOptions = {}) {
  const [run] = await db.select().from(runs).where(eq(runs.id, runId))
  if (!run) throw new Error(`run ${runId} not found`)
  const s = run.settings as TestSettings
  await db.execute(sql`create table if not exists test_executions (run_id int not null, worker_id text, started_at timestamptz default now())`)
  await db.execute(sql`insert into test_executions (run_id, worker_id) values (${runId}, ${opts.workerId ?? null})`)
  await db.update(runs).set({ status: 'running', startedAt: sql`coalesce(${runs.startedAt}, now())` }).where(eq(runs.id, runId))
  let sum = 0
  for (let i = 1; i <= s.steps; i++) {
    spin(s.stepMs, s.checkSignalInStep ? opts.signal : undefined)
    sum += i * i
    if (s.failAt === i) throw new Error(`synthetic failure at step ${i}`)
    const [row] = await db.update(runs).set({ progress: { iteration: i, of: s.steps } }).where(eq(runs.id, runId)).returning({ cancel: runs.cancelRequested })
    if (!s.ignoreCancel && (row?.cancel || opts.signal?.aborted)) {
      await db.update(runs).set({ status: 'cancelled', finishedAt: sql`now()`, error: 'Cancelled.' }).where(eq(runs.id, runId))
      return
    }
  }
  await db.update(runs).set({ status: 'succeeded', outcome: 'converged', convergedBy: 'cost-change', finishedAt: sql`now()`, result: { sumOfSquares: sum, workerId: opts.workerId ?? null } }).where(eq(runs.id, runId))
}

/**
 * One start of a multi-start fit, fitted from the run row (used by the worker threads that share a
 * run's starts, see fan-out.ts). The inputs are loaded once per run and thread.
 */
import { eq } from 'drizzle-orm'
import type { Db } from '../db/client'
import { runs } from '../db/schema'
import { fitOptions, loadRunInputs, problemSpec } from '../services/fit-execution'
import { simulate } from '../../shared/engine'
import { fitFromStart, type StartOutcome, type StartPlan } from '../../shared/engine/fit/driver'
import type { ProgressInfo } from '../../shared/engine/fit/lsq'

const cache = new Map<number, Promise<Awaited<ReturnType<typeof prepare>>>>()

async function prepare(db: Db, runId: number) {
  const [row] = await db.select().from(runs).where(eq(runs.id, runId)).limit(1)
  if (!row) throw new Error(`run ${runId} not found`)
  const { model, settings, est, val } = await loadRunInputs(db, row)
  return { model, settings, spec: problemSpec(model, settings, est, val) }
}

export async function fitPlan(
  db: Db, runId: number, plan: StartPlan, deadline: number | null, signal: AbortSignal, onProgress?: (info: ProgressInfo) => void,
): Promise<StartOutcome> {
  let p = cache.get(runId)
  if (!p) {
    p = prepare(db, runId)
    cache.set(runId, p)
    if (cache.size > 8) cache.delete(cache.keys().next().value!)
  }
  const { model, settings, spec } = await p
  return fitFromStart(model, spec, plan, fitOptions(settings, { signal, ...(onProgress ? { onProgress } : {}) }), simulate, deadline ?? undefined)
}

/** The deadline of a run's estimation, from its time budget (none by default). */
export function deadlineOf(settings: unknown): number | null {
  const budget = (settings as { tolerances?: { timeBudgetMs?: number } })?.tolerances?.timeBudgetMs
  return typeof budget === 'number' ? Date.now() + budget : null
}

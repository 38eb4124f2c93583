/**
 * The cost landscape of a finished run over a chosen pair of estimated quantities (results page), kept
 * off the web server's event loop: it runs as a task on the job runner's worker-thread pool when this
 * process has one (PEWTER_JOBS=thread), else on a small local pool of one thread that ends when idle
 * (queue mode, where the fits run in `npm run worker`). Time-limited; computed grids are cached on the
 * run row (a run's result never changes afterwards), under `result.landscapes["a|b|n"]`.
 */
import { Piscina } from 'piscina'
import { and, eq, sql } from 'drizzle-orm'
import type { AppContext } from '../context'
import { runs } from '../db/schema'
import { badRequest, HttpError } from '../errors'
import { RunPool, threadExecArgv } from '../jobs/pool'
import type { LandscapeOutcome, LandscapeTask } from '../jobs/thread-task'
import type { LandscapeResult } from '../../shared/api/fit'

export const LANDSCAPE_TIME_LIMIT_MS = 60_000
/** at most this many grids are cached per run (each is at most 41 × 41 costs) */
export const LANDSCAPE_CACHE_MAX = 16
/** the key under a run's result that holds the cached grids (not part of the fit result) */
export const LANDSCAPE_CACHE_FIELD = 'landscapes'

export const landscapeKey = (a: string, b: string, n: number) => `${a}|${b}|${n}`

let localPool: Piscina | null = null

/** The one-thread pool of a process without a job pool (threads end after 10 s idle). */
function local(): Piscina {
  localPool ??= new Piscina({
    filename: new URL('../jobs/thread-task.ts', import.meta.url).href,
    maxThreads: 1,
    minThreads: 0,
    idleTimeout: 10_000,
    execArgv: threadExecArgv(),
  })
  return localPool
}

/** Ends the local pool (tests, shutdown); a later request starts it again. */
export async function closeLocalLandscapePool() {
  const p = localPool
  localPool = null
  await p?.destroy()
}

function poolOf(context: AppContext): RunPool | null {
  const pool = (context.services.jobs as { pool?: unknown } | undefined)?.pool
  return pool instanceof RunPool ? pool : null
}

type RunRow = typeof runs.$inferSelect

export interface LandscapeAnswer { landscape: LandscapeResult; cached: boolean; on: 'job-pool' | 'local-thread' | null }

/**
 * The landscape of run `row` (succeeded) for quantities a, b on an n × n grid: from the cache on the
 * row when present, else computed in a worker thread and stored. Input problems → 400; the time limit
 * → 503 with a message naming it.
 */
export async function runLandscape(context: AppContext, row: RunRow, a: string, b: string, n: number, limitMs = LANDSCAPE_TIME_LIMIT_MS): Promise<LandscapeAnswer> {
  const key = landscapeKey(a, b, n)
  const cache = ((row.result as Record<string, unknown> | null)?.[LANDSCAPE_CACHE_FIELD] ?? {}) as Record<string, LandscapeResult>
  if (cache[key]) return { landscape: cache[key], cached: true, on: null }

  const pool = poolOf(context)
  const task: LandscapeTask = { runId: row.id, databaseUrl: context.config.databaseUrl, a, b, n }
  const signal = AbortSignal.timeout(limitMs)
  let outcome: LandscapeOutcome
  try {
    outcome = pool
      ? await pool.runHelperTask<LandscapeOutcome>('landscape', task, signal)
      : await local().run(task, { name: 'landscape', signal }) as LandscapeOutcome
  } catch (e) {
    if (signal.aborted) {
      throw new HttpError(503, 'time_limit_exceeded', `The landscape of run ${row.id} (${a} × ${b}, n = ${n}) exceeded the time limit of ${limitMs >= 1000 ? `${Math.round(limitMs / 1000)} s` : `${limitMs} ms`} (counted from the request, including any wait for a free worker thread) and was stopped; try a smaller n or retry when fits have finished.`)
    }
    throw new Error(`The landscape of run ${row.id} could not be computed: its worker thread failed (${e instanceof Error ? e.message : String(e)})`)
  }
  if (!outcome.ok) {
    if (outcome.input) throw badRequest(outcome.message)
    throw new Error(`The landscape of run ${row.id} could not be computed: ${outcome.message}`)
  }
  if (Object.keys(cache).length < LANDSCAPE_CACHE_MAX) await storeLandscape(context, row.id, key, outcome.landscape).catch(() => {})
  return { landscape: outcome.landscape, cached: false, on: pool ? 'job-pool' : 'local-thread' }
}

/** Adds one grid to the run's cache; only touches a succeeded run's result, never replaces other keys. */
async function storeLandscape(context: AppContext, runId: number, key: string, landscape: LandscapeResult) {
  const field = LANDSCAPE_CACHE_FIELD
  await context.db.update(runs).set({
    result: sql`jsonb_set(${runs.result}, ${`{${field}}`}::text[], coalesce(${runs.result} -> ${field}, '{}'::jsonb) || jsonb_build_object(${key}::text, ${JSON.stringify(landscape)}::jsonb))`,
  }).where(and(eq(runs.id, runId), eq(runs.status, 'succeeded'), sql`${runs.result} is not null`))
}

/** A run's result as the API shows it: without the landscape cache. */
export function withoutLandscapeCache<T extends { result: Record<string, unknown> | null }>(run: T): T {
  if (!run.result || !(LANDSCAPE_CACHE_FIELD in run.result)) return run
  const { [LANDSCAPE_CACHE_FIELD]: _cache, ...result } = run.result
  return { ...run, result }
}

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
import { errorCodes } from '../../shared/api/errors'
import { RunPool, threadExecArgv } from '../jobs/pool'
import type { LandscapeOutcome, LandscapeTask } from '../jobs/thread-task'
import type { LandscapeResult } from '../../shared/api/fit'
import { assertFit } from './runs'

export const LANDSCAPE_TIME_LIMIT_MS = 60_000
/** at most this many grids are cached per run (each is at most 41 × 41 costs); the least recently used goes first */
export const LANDSCAPE_CACHE_MAX = 16
/** the key under a run's result that holds the cached grids (not part of the fit result) */
export const LANDSCAPE_CACHE_FIELD = 'landscapes'
/** the cache keys from least to most recently used */
export const LANDSCAPE_ORDER_FIELD = 'landscapesUsed'
/** landscapes one user may have computing at once (more answer 429) */
export const LANDSCAPE_PER_USER = 2

const computing = new Map<number, number>()

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
export async function runLandscape(context: AppContext, row: RunRow, a: string, b: string, n: number, userId: number, limitMs = LANDSCAPE_TIME_LIMIT_MS): Promise<LandscapeAnswer> {
  assertFit(row)
  const key = landscapeKey(a, b, n)
  const result = row.result as Record<string, unknown> | null
  const cache = (result?.[LANDSCAPE_CACHE_FIELD] ?? {}) as Record<string, LandscapeResult>
  const order = ((result?.[LANDSCAPE_ORDER_FIELD] ?? Object.keys(cache)) as string[]).filter((k) => k in cache)
  if (cache[key]) {
    await storeLandscapes(context, row.id, cache, touch(order, key)).catch(() => {})
    return { landscape: cache[key], cached: true, on: null }
  }
  const mine = computing.get(userId) ?? 0
  if (mine >= LANDSCAPE_PER_USER) {
    throw new HttpError(429, errorCodes.rateLimited, `You already have ${mine} landscapes computing (at most ${LANDSCAPE_PER_USER} at once per user); wait for them to finish.`)
  }
  computing.set(userId, mine + 1)
  try {
    return await computeLandscape(context, row, a, b, n, cache, order, limitMs)
  } finally {
    const left = (computing.get(userId) ?? 1) - 1
    if (left > 0) computing.set(userId, left)
    else computing.delete(userId)
  }
}

/** `order` with `key` moved (or added) to the most recent end */
const touch = (order: string[], key: string) => [...order.filter((k) => k !== key), key]

async function computeLandscape(context: AppContext, row: RunRow, a: string, b: string, n: number, cache: Record<string, LandscapeResult>, order: string[], limitMs: number): Promise<LandscapeAnswer> {
  const key = landscapeKey(a, b, n)

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
    throw new Error(`The landscape of run ${row.id} could not be computed: its worker thread failed (${e instanceof Error ? e.message : String(e)})`, { cause: e })
  }
  if (!outcome.ok) {
    if (outcome.input) throw badRequest(outcome.message)
    throw new Error(`The landscape of run ${row.id} could not be computed: ${outcome.message}`)
  }
  // least recently used out when full
  const used = touch(order, key)
  const kept: Record<string, LandscapeResult> = { ...cache, [key]: outcome.landscape }
  while (used.length > LANDSCAPE_CACHE_MAX) delete kept[used.shift()!]
  await storeLandscapes(context, row.id, kept, used).catch(() => {})
  return { landscape: outcome.landscape, cached: false, on: pool ? 'job-pool' : 'local-thread' }
}

/** Writes the run's grid cache and its use order; only touches a succeeded run's result. */
async function storeLandscapes(context: AppContext, runId: number, cache: Record<string, LandscapeResult>, order: string[]) {
  await context.db.update(runs).set({
    result: sql`${runs.result} || jsonb_build_object(${LANDSCAPE_CACHE_FIELD}::text, ${JSON.stringify(cache)}::jsonb, ${LANDSCAPE_ORDER_FIELD}::text, ${JSON.stringify(order)}::jsonb)`,
  }).where(and(eq(runs.id, runId), eq(runs.status, 'succeeded'), sql`${runs.result} is not null`))
}

/** A run's result as the API shows it: without the landscape cache. */
export function withoutLandscapeCache<T extends { result: Record<string, unknown> | null }>(run: T): T {
  if (!run.result || !(LANDSCAPE_CACHE_FIELD in run.result || LANDSCAPE_ORDER_FIELD in run.result)) return run
  const { [LANDSCAPE_CACHE_FIELD]: _cache, [LANDSCAPE_ORDER_FIELD]: _order, ...result } = run.result
  return { ...run, result }
}

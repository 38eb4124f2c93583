/**
 * Chooses the job runner from the configuration: 'thread' (default, embedded worker-thread pool) or
 * 'queue' (pg-boss; run `npm run worker` somewhere). Attached as `ctx.services.jobs`.
 */
import type { AppContext } from '../context'
import type { JobRunner } from './types'
import { ThreadRunner } from './thread-runner'
import { QueueRunner } from './queue-runner'
import { executorUrl } from './executor'

export interface JobRunnerOptions {
  /** module exporting executeRun (default: config.runExecutor, else server/services/fit-execution.ts) */
  executor?: string
  onSettled?: (runId: number) => Promise<void>
  heartbeatMs?: number
  stopGraceMs?: number
  /** boot every thread at start (default: outside tests) */
  warm?: boolean
}

export async function createJobRunner(context: AppContext, o: JobRunnerOptions = {}): Promise<JobRunner> {
  const c = context.config
  if (c.jobMode === 'queue') {
    return QueueRunner.start(context.db, { databaseUrl: c.databaseUrl, timeoutSeconds: c.jobTimeoutSeconds, staleSeconds: c.jobStaleSeconds, maxAttempts: c.jobMaxAttempts })
  }
  const runner = new ThreadRunner(context.db, {
    db: context.db,
    databaseUrl: c.databaseUrl,
    threads: c.workerThreads,
    executorUrl: executorUrl(o.executor ?? c.runExecutor ?? undefined),
    timeoutSeconds: c.jobTimeoutSeconds,
    staleSeconds: c.jobStaleSeconds,
    maxAttempts: c.jobMaxAttempts,
    heartbeatMs: o.heartbeatMs,
    warm: o.warm ?? process.env.NODE_ENV !== 'test',
    stopGraceMs: o.stopGraceMs,
    onSettled: o.onSettled,
    log: process.env.NODE_ENV === 'test' ? undefined : (m) => console.log(`[pewter] ${m}`),
  })
  await runner.start()
  return runner
}

export type { JobRunner }

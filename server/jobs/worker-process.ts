/**
 * `npm run worker`: a fit worker for queue mode (PEWTER_JOBS=queue on the web process). Runs on any
 * machine pointed at the same DATABASE_URL; takes runs from the pg-boss queue and executes them in a
 * pool of PEWTER_WORKER_THREADS worker threads, keeping each claim's heartbeat fresh and polling the
 * run rows for cancellation. Runs of a worker that dies (even by SIGKILL) are noticed by their stale
 * heartbeat and handed to another worker, or failed with the reason after PEWTER_JOB_MAX_ATTEMPTS.
 * SIGTERM/SIGINT hand the runs held back to the queue at once and exit.
 */
import { loadConfig } from '../config'
import { migrateDatabase, openDatabase } from '../db/client'
import { createMailer } from '../mail/mailer'
import { notifyRunSettled } from '../services/notifications'
import { RunPool, newWorkerId } from './pool'
import { FIT_QUEUE, sendFit, startBoss, type FitJob } from './boss'
import { requeueStale } from './queue-runner'
import { reapPeriodMs } from './claims'
import { executorUrl } from './executor'
import { survivePostgresRestarts } from '../db/resilience'

async function main() {
  survivePostgresRestarts((m) => console.error(`[pewter-worker] ${m}`))
  const config = loadConfig()
  if (!config.databaseUrl) throw new Error('DATABASE_URL is not set: point the worker at the database of the Pewter server')
  const workerId = process.env.PEWTER_WORKER_ID ?? newWorkerId('worker')
  const log = (m: string) => console.log(`[pewter-worker ${workerId}] ${m}`)
  const database = openDatabase(config.databaseUrl, 4)
  // the web process normally migrates; a worker started first does it, under a lock
  await migrateLocked(database)
  const mailer = createMailer(config, log)
  const pool = new RunPool({
    db: database.db,
    databaseUrl: config.databaseUrl,
    threads: config.workerThreads,
    executorUrl: executorUrl(config.runExecutor ?? undefined),
    timeoutSeconds: config.jobTimeoutSeconds,
    staleSeconds: config.jobStaleSeconds,
    heartbeatMs: Number(process.env.PEWTER_HEARTBEAT_MS ?? 1000),
    workerId,
    warm: true,
    log,
    onSettled: async (runId) => { await notifyRunSettled({ db: database.db, mailer, publicUrl: config.publicUrl }, runId) },
  })
  await pool.warmUp()
  const boss = await startBoss(config.databaseUrl, { timeoutSeconds: config.jobTimeoutSeconds })
  for (let i = 0; i < config.workerThreads; i++) {
    await boss.work<FitJob>(FIT_QUEUE, { batchSize: 1, pollingIntervalSeconds: 0.5 }, async (jobs) => {
      for (const job of jobs) {
        // a failure here (database away) leaves the run's heartbeat to go stale: the reaper queues it again
        const outcome = await pool.execute(job.data.runId).catch((e) => `not finished (${e instanceof Error ? e.message : e}); it is queued again once its heartbeat is stale`)
        log(`run ${job.data.runId}: ${outcome}`)
      }
    })
  }
  const reap = () => requeueStale(database.db, boss, config.jobStaleSeconds, config.jobMaxAttempts, log)
  const reaper = setInterval(() => { void reap().catch((e) => log(`reaper: ${e instanceof Error ? e.message : e}`)) }, reapPeriodMs(config.jobStaleSeconds))
  log(`ready: ${config.workerThreads} thread(s) on queue ${FIT_QUEUE}`)

  let stopping = false
  const stop = async () => {
    if (stopping) return
    stopping = true
    log('stopping: handing held runs back to the queue')
    clearInterval(reaper)
    await boss.offWork(FIT_QUEUE).catch(() => {})
    const released = await pool.close('release')
    for (const id of released) await sendFit(boss, id).catch(() => {})
    await boss.stop({ graceful: false, wait: true }).catch(() => {})
    mailer.close()
    await database.close()
    process.exit(0)
  }
  process.on('SIGTERM', () => { void stop() })
  process.on('SIGINT', () => { void stop() })
}

async function migrateLocked(database: ReturnType<typeof openDatabase>) {
  const client = await database.pool.connect()
  try {
    await client.query('select pg_advisory_lock(7243001)')
    await migrateDatabase(database)
  } finally {
    await client.query('select pg_advisory_unlock(7243001)').catch(() => {})
    client.release()
  }
}

main().catch((err) => {
  console.error(`[pewter-worker] ${err instanceof Error ? err.stack ?? err.message : err}`)
  process.exit(1)
})

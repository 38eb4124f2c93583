/** pg-boss (10.x) set-up shared by the web process (queue mode: enqueue only) and `npm run worker`. */
import PgBoss from 'pg-boss'

export const FIT_QUEUE = 'pewter-fit'
export const BOSS_SCHEMA = 'pgboss'

export interface FitJob { runId: number }

export async function startBoss(databaseUrl: string, opts: { timeoutSeconds: number; supervise?: boolean }): Promise<PgBoss> {
  const boss = new PgBoss({ connectionString: databaseUrl, schema: BOSS_SCHEMA, max: 4, supervise: opts.supervise ?? true, schedule: false })
  boss.on('error', (err) => { console.error(`[pewter] job queue: ${err instanceof Error ? err.message : err}`) })
  await boss.start()
  // send() to a queue that does not exist returns null silently: create it first (idempotent).
  // Killed workers are detected by the run heartbeats (claims.ts), far sooner than this expiry, which
  // only backs up the time limit; a retried job whose run is finished or held does nothing.
  await boss.createQueue(FIT_QUEUE, { name: FIT_QUEUE, policy: 'standard', retryLimit: 2, retryDelay: 1, expireInSeconds: opts.timeoutSeconds + 120 })
  return boss
}

export async function sendFit(boss: PgBoss, runId: number) {
  const id = await boss.send(FIT_QUEUE, { runId } satisfies FitJob)
  if (!id) throw new Error(`the job queue refused run ${runId}`)
  return id
}

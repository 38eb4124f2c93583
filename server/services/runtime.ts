/**
 * Attaches the services of the jobs and mail layers to an app context (called by createContext):
 * `ctx.services.mailer` (nodemailer over SMTP), `ctx.services.jobs` (the JobRunner chosen by
 * PEWTER_JOBS), `ctx.services.requests` (the request pool: CPU-heavy work of requests off the event
 * loop). Closing the database closes them first.
 */
import type { AppContext } from '../context'
import { createMailer, type Mailer } from '../mail/mailer'
import { createJobRunner } from '../jobs'
import type { JobRunner } from '../jobs/types'
import { notifyRunSettled } from './notifications'
import { RequestPool } from '../jobs/request-pool'

export async function attachServices(context: AppContext) {
  const mailer: Mailer = createMailer(context.config)
  context.services.mailer = mailer
  const jobs: JobRunner = await createJobRunner(context, {
    onSettled: (runId) => notifyRunSettled({ db: context.db, mailer, publicUrl: context.config.publicUrl }, runId).then(() => {}),
  })
  context.services.jobs = jobs
  const requests = new RequestPool({ threads: context.config.requestThreads, timeLimitMs: context.config.requestTimeLimitMs, warm: process.env.NODE_ENV !== 'test' })
  context.services.requests = requests
  const closeDatabase = context.database.close
  context.database.close = async () => {
    await jobs.close().catch(() => {})
    await requests.close().catch(() => {})
    mailer.close()
    await closeDatabase()
  }
}

/** Configuration read from the environment once (documented in README). */
export interface Config {
  port: number
  /** the address the server listens on (HOST, default 127.0.0.1) */
  host: string
  /** PEWTER_DEMO: '1' seeds the demo workspace, '0' never, unset: only on loopback outside production */
  demo: 'on' | 'off' | 'auto'
  /** production mode (NODE_ENV=production) */
  production: boolean
  databaseUrl: string
  sessionSecret: string
  /** public origin of the app, used in e-mail links and the Origin check */
  publicUrl: string
  /** 'thread' (embedded worker pool, default) or 'queue' (pg-boss; `npm run worker` processes run fits) */
  jobMode: 'thread' | 'queue'
  workerThreads: number
  smtpUrl: string | null
  /** sender of every e-mail */
  mailFrom: string
  /** no real relay (SMTP_URL unset or the local fake server): print each message's links to the log */
  linksToLog: boolean
  /** port of the local fake SMTP server `npm start` runs when SMTP_URL is not set */
  fakeSmtpPort: number
  /** a fit running longer is stopped and marked failed */
  jobTimeoutSeconds: number
  /** a running fit whose worker has not written a heartbeat for this long is retried or failed */
  jobStaleSeconds: number
  /** how often a fit is started before a lost worker marks it failed */
  jobMaxAttempts: number
  /** module exporting executeRun (default server/services/fit-execution.ts) */
  runExecutor: string | null
  trustProxy: boolean
  rateLimitAuth: number
  uploadLimitBytes: number
  /** threads of the pool that does the CPU-heavy work of requests (compile for a run, CSV reading, conditioning) */
  requestThreads: number
  /** time limit of one request's work on that pool */
  requestTimeLimitMs: number
}

/** The development secret used when SESSION_SECRET is unset; refused when the server is reachable from other machines. */
export const DEFAULT_SESSION_SECRET = 'pewter-development-secret-change-me'

export function loadConfig(env: NodeJS.ProcessEnv = process.env): Config {
  const port = Number(env.PORT ?? 3000)
  const fakeSmtp = !env.SMTP_URL || env.PEWTER_FAKE_SMTP === '1'
  return {
    port,
    host: env.HOST ?? '127.0.0.1',
    demo: env.PEWTER_DEMO === '1' ? 'on' : env.PEWTER_DEMO === '0' ? 'off' : 'auto',
    production: env.NODE_ENV === 'production',
    databaseUrl: env.DATABASE_URL ?? '',
    sessionSecret: env.SESSION_SECRET ?? DEFAULT_SESSION_SECRET,
    publicUrl: env.PUBLIC_URL ?? `http://127.0.0.1:${port}`,
    jobMode: env.PEWTER_JOBS === 'queue' ? 'queue' : 'thread',
    workerThreads: Math.max(1, Number(env.PEWTER_WORKER_THREADS ?? 2)),
    smtpUrl: env.SMTP_URL ?? null,
    mailFrom: env.MAIL_FROM ?? 'Pewter <pewter@localhost>',
    linksToLog: env.PEWTER_MAIL_LINKS_TO_LOG ? env.PEWTER_MAIL_LINKS_TO_LOG === '1' : fakeSmtp && env.NODE_ENV !== 'test',
    fakeSmtpPort: Number(env.PEWTER_FAKE_SMTP_PORT ?? 2525),
    jobTimeoutSeconds: Math.max(1, Number(env.PEWTER_JOB_TIMEOUT_SECONDS ?? 3600)),
    jobStaleSeconds: Math.max(2, Number(env.PEWTER_JOB_STALE_SECONDS ?? 20)),
    jobMaxAttempts: Math.max(1, Number(env.PEWTER_JOB_MAX_ATTEMPTS ?? 3)),
    runExecutor: env.PEWTER_RUN_EXECUTOR ?? null,
    trustProxy: env.TRUST_PROXY === '1',
    rateLimitAuth: Number(env.PEWTER_AUTH_RATE_LIMIT ?? 20),
    uploadLimitBytes: Number(env.PEWTER_UPLOAD_LIMIT_BYTES ?? 20 * 1024 * 1024),
    requestThreads: Math.max(1, Number(env.PEWTER_REQUEST_THREADS ?? 1)),
    requestTimeLimitMs: Math.max(100, Number(env.PEWTER_REQUEST_TIME_LIMIT_SECONDS ?? 30) * 1000),
  }
}

/**
 * Keeps a server or worker process alive while PostgreSQL restarts. Our own pools log lost connections
 * (db/client.ts); a library that loses its connection inside a timer of its own (the job queue's polling
 * and job bookkeeping) can leave a rejected promise nobody awaits, which would end the process. Such a
 * rejection caused by the database being away is logged (once per burst) and the process goes on: the
 * queue polls again and the run heartbeats (jobs/claims.ts) put abandoned work back once the database is
 * back. Any other unhandled rejection still ends the process as Node does by default.
 */

let installed = false

export function survivePostgresRestarts(log: (message: string) => void) {
  if (installed) return
  installed = true
  let last = 0
  process.on('unhandledRejection', (reason) => {
    if (!databaseUnavailable(reason)) throw reason
    if (Date.now() - last > 5000) log(`the database is unreachable (${reason instanceof Error ? reason.message : String(reason)}); retrying`)
    last = Date.now()
  })
}

/** Errors of a lost or refused database connection (server restarting, network): PostgreSQL SQLSTATE class 57/08, socket errors. */
export function databaseUnavailable(err: unknown): boolean {
  const e = err as { code?: unknown; message?: unknown } | null
  const code = typeof e?.code === 'string' ? e.code : ''
  if (/^(57P0[1-3]|08\d\d\d)$/.test(code) || ['ECONNREFUSED', 'ECONNRESET', 'EPIPE', 'ETIMEDOUT'].includes(code)) return true
  const msg = typeof e?.message === 'string' ? e.message : ''
  return /Connection terminated|timeout exceeded when trying to connect|the database system is (starting up|shutting down)|Client has encountered a connection error/.test(msg)
}

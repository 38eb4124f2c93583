import pg from 'pg'
import { drizzle, type NodePgDatabase } from 'drizzle-orm/node-postgres'
import { migrate } from 'drizzle-orm/node-postgres/migrator'
import { fileURLToPath } from 'node:url'
import * as schema from './schema'

export type Db = NodePgDatabase<typeof schema>

export interface Database {
  pool: pg.Pool
  db: Db
  close: () => Promise<void>
}

export const migrationsFolder = fileURLToPath(new URL('../../drizzle', import.meta.url))

/**
 * A pool that survives a restart of PostgreSQL: an idle client the server drops (restart, failover,
 * admin kill) emits 'error' on the pool, which would end the process when nobody listens; here it is
 * logged and the client discarded (pg replaces it on the next query). Queries made while the database
 * is away fail with their error (routes answer it; /api/health answers 503) and work again once it is back.
 */
export function openDatabase(url: string, max = 10, log: (m: string) => void = logPoolError): Database {
  const pool = new pg.Pool({ connectionString: url, max, connectionTimeoutMillis: 10_000 })
  pool.on('error', (err) => log(`database connection lost: ${err.message}`))
  const db = drizzle(pool, { schema })
  return { pool, db, close: () => pool.end() }
}

let lastPoolLog = 0
function logPoolError(message: string) {
  if (process.env.NODE_ENV === 'test') return
  // one line per burst (every idle client reports the same restart)
  if (Date.now() - lastPoolLog < 5000) return
  lastPoolLog = Date.now()
  console.error(`[pewter] ${message}`)
}

/** Applies the committed migrations in drizzle/ (idempotent). */
export async function migrateDatabase(database: Database): Promise<void> {
  await migrate(database.db, { migrationsFolder })
}

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

export function openDatabase(url: string, max = 10): Database {
  const pool = new pg.Pool({ connectionString: url, max })
  const db = drizzle(pool, { schema })
  return { pool, db, close: () => pool.end() }
}

/** Applies the committed migrations in drizzle/ (idempotent). */
export async function migrateDatabase(database: Database): Promise<void> {
  await migrate(database.db, { migrationsFolder })
}

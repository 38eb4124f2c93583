import { describe, expect, it } from 'vitest'
import pg from 'pg'
import { openDatabase, migrateDatabase } from '../../server/db/client'
import { freshDatabaseUrl } from '../helpers/db'

describe('migrations', () => {
  it('apply to an empty database, twice without harm', async () => {
    const url = await freshDatabaseUrl('migrations')
    const database = openDatabase(url)
    try {
      await migrateDatabase(database)
      await migrateDatabase(database)
      const c = new pg.Client({ connectionString: url })
      await c.connect()
      const r = await c.query(`select table_name from information_schema.tables where table_schema = 'public'`)
      await c.end()
      const names = r.rows.map((x) => x.table_name)
      expect(names).toEqual(expect.arrayContaining(['users', 'workspaces', 'memberships', 'user_sessions', 'models', 'model_versions', 'datasets', 'runs']))
    } finally {
      await database.close()
    }
  })
})

/** Each test file gets its own fresh database in the suite's cluster, migrated from drizzle/. */
import { createDatabase } from '../../scripts/pg'
import { inject } from 'vitest'

let counter = 0

export async function freshDatabaseUrl(tag: string): Promise<string> {
  const admin = inject('pgAdminUrl')
  const name = `t_${tag.replace(/[^a-z0-9]/gi, '_').toLowerCase()}_${process.pid}_${Date.now()}_${counter++}`
  return createDatabase(admin, name)
}

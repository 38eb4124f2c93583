/** Each test file gets its own fresh database in the suite's cluster, migrated from drizzle/. */
import pg from 'pg'
import { inject } from 'vitest'

let counter = 0

export async function freshDatabaseUrl(tag: string): Promise<string> {
  const admin = inject('pgAdminUrl')
  const name = `t_${tag.replace(/[^a-z0-9]/gi, '_').toLowerCase()}_${process.pid}_${Date.now()}_${counter++}`
  const client = new pg.Client({ connectionString: admin })
  await client.connect()
  await client.query(`CREATE DATABASE ${name}`)
  await client.end()
  const u = new URL(admin)
  u.pathname = `/${name}`
  return u.toString()
}

/**
 * Starts a throw-away PostgreSQL cluster for the whole suite (unless DATABASE_URL is set) and removes
 * it afterwards. Test files create their own databases from it (see tests/helpers/db.ts).
 */
import { mkdtempSync, rmSync, chmodSync } from 'node:fs'
import os from 'node:os'
import path from 'node:path'
import type { TestProject } from 'vitest/node'
import { freePort, startCluster } from '../../scripts/pg'

export default async function setup(project: TestProject) {
  if (process.env.DATABASE_URL) {
    project.provide('pgAdminUrl', process.env.DATABASE_URL)
    return
  }
  const root = mkdtempSync(path.join(os.tmpdir(), 'pewter-test-'))
  chmodSync(root, 0o755)
  const port = await freePort()
  const cluster = await startCluster({ dataDir: path.join(root, 'pgdata'), port, db: 'pewter_test', quiet: true })
  project.provide('pgAdminUrl', cluster.url)
  return () => {
    cluster.stop()
    rmSync(root, { recursive: true, force: true })
  }
}

declare module 'vitest' {
  export interface ProvidedContext {
    pgAdminUrl: string
  }
}

/**
 * `npm run bench:server`: /api/health latency (p50, p99) with the server idle and while two fits run
 * in the embedded worker-thread pool (a benchmark, not a test). Starts a throw-away PostgreSQL unless
 * DATABASE_URL is set; the fits are multi-start fits of the invented demo project (seeded synthetic
 * data of the fictional Tinmoor Works plant).
 */
import { mkdtempSync, rmSync, chmodSync } from 'node:fs'
import os from 'node:os'
import path from 'node:path'
import type { AddressInfo } from 'node:net'
import { eq } from 'drizzle-orm'
import pg from 'pg'
import { freePort, startCluster } from '../scripts/pg'
import { createApp } from '../server/app'
import { createContext } from '../server/bootstrap'
import { seedDemoProject } from '../server/services/demo-project'
import { datasets, projects, runs } from '../server/db/schema'
import type { ThreadRunner } from '../server/jobs/thread-runner'

const SAMPLES = Number(process.env.BENCH_SAMPLES ?? 400)

function quantile(v: number[], q: number) {
  const s = [...v].sort((a, b) => a - b)
  return s[Math.min(s.length - 1, Math.floor(q * s.length))]
}

async function health(base: string): Promise<number> {
  const t0 = performance.now()
  const r = await fetch(`${base}/api/health`)
  await r.arrayBuffer()
  if (r.status !== 200) throw new Error(`/api/health answered ${r.status}`)
  return performance.now() - t0
}

async function main() {
  let stopCluster: (() => void) | null = null
  let root: string | null = null
  let adminUrl = process.env.DATABASE_URL
  if (!adminUrl) {
    root = mkdtempSync(path.join(os.tmpdir(), 'pewter-bench-'))
    chmodSync(root, 0o755)
    const cluster = await startCluster({ dataDir: path.join(root, 'pgdata'), port: await freePort(), db: 'pewter_bench', quiet: true })
    adminUrl = cluster.url
    stopCluster = cluster.stop
  }
  const dbName = `bench_server_${Date.now()}`
  const admin = new pg.Client({ connectionString: adminUrl })
  await admin.connect()
  await admin.query(`CREATE DATABASE ${dbName}`)
  await admin.end()
  const u = new URL(adminUrl)
  u.pathname = `/${dbName}`
  const threads = Number(process.env.PEWTER_WORKER_THREADS ?? 2)
  const context = await createContext({ databaseUrl: u.toString(), workerThreads: threads, smtpUrl: 'smtp://127.0.0.1:9', rateLimitAuth: 1e9 })
  try {
    await seedDemoProject(context.db)
    const pool = (context.services.jobs as ThreadRunner).pool
    await pool.warmUp()
    const server = createApp(context, { serveClient: false }).listen(0, '127.0.0.1')
    await new Promise<void>((r) => server.once('listening', () => r()))
    const base = `http://127.0.0.1:${(server.address() as AddressInfo).port}`
    for (let i = 0; i < 50; i++) await health(base) // warm-up

    const idle: number[] = []
    for (let i = 0; i < SAMPLES; i++) idle.push(await health(base))

    // two fits of the demo project (8 starts each), queued like the API does
    const [project] = await context.db.select().from(projects).where(eq(projects.name, 'Buffer vessel B2 calibration (demo)'))
    const [seeded] = await context.db.select().from(runs).where(eq(runs.projectId, project.id))
    const [est] = await context.db.select().from(datasets).where(eq(datasets.projectId, project.id))
    const ids: number[] = []
    for (const seed of [21, 22]) {
      const [r] = await context.db.insert(runs).values({
        workspaceId: seeded.workspaceId, projectId: seeded.projectId, modelId: seeded.modelId, modelVersion: seeded.modelVersion,
        settings: { ...(seeded.settings as Record<string, unknown>), estimation: [est.id], starts: 8, seed }, provenance: seeded.provenance, createdBy: seeded.createdBy,
      }).returning({ id: runs.id })
      ids.push(r.id)
      await (context.services.jobs as ThreadRunner).enqueue(r.id)
    }
    const running = async () => {
      const rows = await context.db.select({ status: runs.status }).from(runs).where(eq(runs.id, ids[0]))
      const rows2 = await context.db.select({ status: runs.status }).from(runs).where(eq(runs.id, ids[1]))
      return rows[0].status === 'running' && rows2[0].status === 'running'
    }
    const t0 = Date.now()
    while (!(await running())) {
      if (Date.now() - t0 > 60_000) throw new Error('the two fits did not start within 60 s')
      await new Promise((r) => setTimeout(r, 50))
    }
    const busy: number[] = []
    const fitStart = Date.now()
    while (busy.length < SAMPLES && (await running())) {
      for (let i = 0; i < 20; i++) busy.push(await health(base))
    }
    const endedEarly = busy.length < SAMPLES
    const fitMs = Date.now() - fitStart
    await pool.idle()
    const finals = await context.db.select({ id: runs.id, status: runs.status, started: runs.startedAt, finished: runs.finishedAt }).from(runs).where(eq(runs.projectId, project.id))
    await new Promise<void>((r) => server.close(() => r()))

    const f = (v: number) => v.toFixed(2).padStart(8)
    console.log(`\nPewter /api/health latency (ms), ${SAMPLES} sequential requests each, worker threads: ${threads}, cores: ${os.cpus().length}`)
    console.log(`                      p50       p99       max   samples`)
    console.log(`idle            ${f(quantile(idle, 0.5))}  ${f(quantile(idle, 0.99))}  ${f(Math.max(...idle))}  ${String(idle.length).padStart(8)}`)
    console.log(`two fits run    ${f(quantile(busy, 0.5))}  ${f(quantile(busy, 0.99))}  ${f(Math.max(...busy))}  ${String(busy.length).padStart(8)}`)
    console.log(`\n"two fits run": sampled while both fits ran (checked every 20 requests${endedEarly ? `; the first fit ended after ${(fitMs / 1000).toFixed(1)} s` : ''})`)
    for (const r of finals.filter((x) => ids.includes(x.id))) {
      console.log(`fit #${r.id}: ${r.status} in ${((r.finished!.getTime() - r.started!.getTime()) / 1000).toFixed(1)} s`)
    }
  } finally {
    await context.database.close()
    stopCluster?.()
    if (root) rmSync(root, { recursive: true, force: true })
  }
}

main().catch((e) => { console.error(e); process.exit(1) })

/**
 * `npm run bench:server`: /api/health latency (p50, p99, max) with the server idle, while two fits run
 * in the embedded worker-thread pool, and while each hostile request (a sheet whose generated code is
 * too large, a CSV of 200 001 columns, 100 000 exclusion windows, resampling plus a wide outlier window)
 * is in flight (a benchmark, not a test). Starts a throw-away PostgreSQL unless
 * DATABASE_URL is set; the fits are multi-start fits of the invented demo project (seeded synthetic
 * data of the fictional Tinmoor Works plant).
 */
import { mkdtempSync, rmSync, chmodSync } from 'node:fs'
import os from 'node:os'
import path from 'node:path'
import type { AddressInfo } from 'node:net'
import { eq } from 'drizzle-orm'
import { createDatabase, freePort, startCluster } from '../scripts/pg'
import { createApp } from '../server/app'
import { createContext } from '../server/bootstrap'
import { seedDemoProject } from '../server/services/demo-project'
import { datasets, projects, runs } from '../server/db/schema'
import type { ThreadRunner } from '../server/jobs/thread-runner'
import { DEMO_PASSWORD } from '../server/db/seed'

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

/** The requests that used to freeze the event loop (invented data), each answered with a 4xx naming a limit. */
async function hostileRequests(base: string) {
  const headers = { 'Content-Type': 'application/json', 'X-Requested-With': 'pewter' }
  const signin = await fetch(`${base}/api/auth/signin`, { method: 'POST', headers, body: JSON.stringify({ email: 'modeler@tinmoor.example', password: DEMO_PASSWORD }) })
  const cookie = (signin.headers.get('set-cookie') ?? '').split(';')[0]
  const auth = { ...headers, Cookie: cookie }
  const ws = `${base}/api/workspaces/tinmoor`
  const json = async (r: Promise<Response>) => { const x = await r; return { status: x.status, body: await x.json() as Record<string, any> } }
  const post = (url: string, body: unknown) => fetch(url, { method: 'POST', headers: auth, body: JSON.stringify(body) })
  const project = await json(post(`${ws}/projects`, { name: 'Hostile requests (bench, synthetic)' }))
  const pid = project.body.id as number
  const uploadCsv = (text: string, name: string) => {
    const form = new FormData()
    form.append('file', new Blob([text], { type: 'text/csv' }), name)
    return fetch(`${ws}/projects/${pid}/datasets`, { method: 'POST', headers: { 'X-Requested-With': 'pewter', Cookie: cookie }, body: form })
  }
  const rows = Array.from({ length: 1000 }, (_, k) => `${k},${Math.sin(k / 10).toFixed(4)},${(k % 7) / 7}`)
  const ds = await json(uploadCsv(['t [s],level [m],valve', ...rows].join('\n'), 'thousand.csv'))
  const lines = Array.from({ length: 40 }, (_, i) => `state x${i} = 1 [1]\nx${i}' = k*(${Array(60).fill(`x${i}`).join('^')})`)
  const model = await json(post(`${ws}/models`, { title: 'Power chains (bench, synthetic)', text: `param k = 1 [1/s] in [0, 2]\n${lines.join('\n')}\noutput y = x1` }))
  const wide = `${['t', ...Array.from({ length: 200_000 }, (_, i) => `c${i}`)].join(',')}\n${['0', ...Array(200_000).fill('1')].join(',')}\n`
  // bodies built before the clock starts (this process is also the client)
  const windows = JSON.stringify({ steps: [{ op: 'exclude', windows: Array.from({ length: 100_000 }, (_, i) => [i, i + 0.5]) }] })
  const cases: [string, () => Promise<Response>][] = [
    ['run of a too-large sheet', () => post(`${ws}/projects/${pid}/runs`, { modelId: model.body.id, version: 1, estimation: [ds.body.id] })],
    ['CSV of 200 001 columns', () => uploadCsv(wide, 'wide.csv')],
    ['100 000 exclusion windows', () => fetch(`${ws}/datasets/${ds.body.id}/condition`, { method: 'POST', headers: auth, body: windows })],
    ['resample + outlier window', () => post(`${ws}/datasets/${ds.body.id}/condition`, { steps: [{ op: 'resample', step: 0.001 }, { op: 'outliers', halfWindow: 500 }] })],
  ]
  const out: { name: string; ms: number[]; status: number; totalMs: number }[] = []
  for (const [name, send] of cases) {
    let done = false
    const t0 = performance.now()
    const answer = send().then(async (r) => { await r.arrayBuffer(); done = true; return r.status })
    const ms: number[] = []
    while (!done) ms.push(await health(base))
    out.push({ name, ms, status: await answer, totalMs: performance.now() - t0 })
  }
  return out
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
  const databaseUrl = await createDatabase(adminUrl, `bench_server_${Date.now()}`)
  const threads = Number(process.env.PEWTER_WORKER_THREADS ?? 2)
  const context = await createContext({ databaseUrl, workerThreads: threads, smtpUrl: 'smtp://127.0.0.1:9', rateLimitAuth: 1e9 })
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
    const hostile = await hostileRequests(base)
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
    console.log(`\n/api/health latency (ms) while each hostile request runs (sequential health requests until it answers)`)
    console.log(`                                   p50       p99       max   samples  answer`)
    for (const h of hostile) {
      console.log(`${h.name.padEnd(30)} ${f(quantile(h.ms, 0.5))}  ${f(quantile(h.ms, 0.99))}  ${f(Math.max(...h.ms))}  ${String(h.ms.length).padStart(8)}  ${h.status} in ${(h.totalMs / 1000).toFixed(1)} s`)
    }
  } finally {
    await context.database.close()
    stopCluster?.()
    if (root) rmSync(root, { recursive: true, force: true })
  }
}

main().catch((e) => { console.error(e); process.exit(1) })

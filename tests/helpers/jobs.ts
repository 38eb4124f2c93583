/** Fixtures for the job tests: run rows for the test executor and bounded, always-killed worker processes. */
import { spawn, type ChildProcess } from 'node:child_process'
import { fileURLToPath } from 'node:url'
import { eq, sql } from 'drizzle-orm'
import type { Db } from '../../server/db/client'
import { models, projects, runs, users, workspaces } from '../../server/db/schema'
import type { TestSettings } from './test-executor'

export const TEST_EXECUTOR = fileURLToPath(new URL('./test-executor.ts', import.meta.url))
const root = fileURLToPath(new URL('../..', import.meta.url))

/** A project and a model in the demo workspace to hang runs on. */
export async function runFixture(db: Db, creatorEmail = 'modeler@tinmoor.example') {
  const [ws] = await db.select().from(workspaces).where(eq(workspaces.slug, 'tinmoor'))
  const [user] = await db.select().from(users).where(eq(users.email, creatorEmail))
  const [project] = await db.insert(projects).values({ workspaceId: ws.id, name: 'Job test project (synthetic)', createdBy: user.id }).returning()
  const [model] = await db.insert(models).values({ workspaceId: ws.id, ownerId: user.id, slug: `job-test-${Date.now()}-${Math.random().toString(36).slice(2, 6)}`, title: 'Buffer vessel level (job test)' }).returning()
  return { ws, user, project, model }
}

export async function insertRun(db: Db, f: Awaited<ReturnType<typeof runFixture>>, settings: TestSettings): Promise<number> {
  const [run] = await db.insert(runs).values({
    workspaceId: f.ws.id, projectId: f.project.id, modelId: f.model.id, modelVersion: 1,
    settings, provenance: { synthetic: true }, createdBy: f.user.id,
  }).returning({ id: runs.id })
  return run.id
}

export async function getRun(db: Db, id: number) {
  const [r] = await db.select().from(runs).where(eq(runs.id, id))
  return r
}

export async function executions(db: Db, runId: number): Promise<string[]> {
  const r = await db.execute<{ worker_id: string }>(sql`select worker_id from test_executions where run_id = ${runId} order by started_at`).catch(() => ({ rows: [] as { worker_id: string }[] }))
  return r.rows.map((x) => x.worker_id)
}

/** Polls `check` every 100 ms until it returns a value, failing after `ms`. */
export async function waitFor<T>(what: string, check: () => Promise<T | null | undefined | false>, ms = 30_000): Promise<T> {
  const end = Date.now() + ms
  for (;;) {
    const v = await check()
    if (v) return v
    if (Date.now() > end) throw new Error(`timed out after ${ms} ms waiting for ${what}`)
    await new Promise((r) => setTimeout(r, 100))
  }
}

export const sumOfSquares = (n: number) => (n * (n + 1) * (2 * n + 1)) / 6

export interface WorkerProc {
  id: string
  child: ChildProcess
  output: () => string
  kill: (signal?: NodeJS.Signals) => Promise<void>
}

const live = new Set<WorkerProc>()

/** Starts `npm run worker`'s script with the test executor; resolves once it is ready (bounded). */
export async function startWorker(databaseUrl: string, id: string, env: Record<string, string> = {}): Promise<WorkerProc> {
  const child = spawn(process.execPath, ['--import', 'tsx', 'server/jobs/worker-process.ts'], {
    cwd: root,
    env: {
      ...process.env,
      DATABASE_URL: databaseUrl,
      PEWTER_RUN_EXECUTOR: TEST_EXECUTOR,
      PEWTER_WORKER_ID: id,
      PEWTER_WORKER_THREADS: '1',
      PEWTER_JOB_STALE_SECONDS: '3',
      PEWTER_HEARTBEAT_MS: '300',
      SMTP_URL: 'smtp://127.0.0.1:9',
      ...env,
    },
    stdio: ['ignore', 'pipe', 'pipe'],
  })
  let out = ''
  child.stdout!.on('data', (d) => { out += String(d) })
  child.stderr!.on('data', (d) => { out += String(d) })
  const exited = new Promise<void>((resolve) => child.once('exit', () => resolve()))
  const proc: WorkerProc = {
    id,
    child,
    output: () => out,
    kill: async (signal = 'SIGKILL') => {
      if (child.exitCode === null && child.signalCode === null) child.kill(signal)
      const t = setTimeout(() => child.kill('SIGKILL'), 5000)
      await exited
      clearTimeout(t)
      live.delete(proc)
    },
  }
  live.add(proc)
  // never outlive the test run
  const guard = setTimeout(() => child.kill('SIGKILL'), 120_000)
  guard.unref()
  child.once('exit', () => clearTimeout(guard))
  try {
    await waitFor(`worker ${id} to be ready`, async () => {
      if (child.exitCode !== null) throw new Error(`worker ${id} exited early:\n${out}`)
      return out.includes('ready:')
    }, 40_000)
  } catch (err) {
    await proc.kill()
    throw err
  }
  return proc
}

export async function killAllWorkers() {
  await Promise.all([...live].map((w) => w.kill('SIGKILL')))
}

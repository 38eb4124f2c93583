/**
 * The server and a `npm run worker` process survive a restart of PostgreSQL. This file runs its own
 * cluster (scripts/pg.ts, on a free port) so that stopping it touches no other test file. While the
 * database is away /api/health answers 503 with the reason and other routes 503; afterwards 200 again,
 * with no restart of either process, and a fit that was running when the database went away is
 * resumed (handed back to the queue once its heartbeat went stale) or failed with a reason.
 * The executor is tests/helpers/test-executor.ts (synthetic CPU-bound steps).
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import request from 'supertest'
import { mkdtempSync, rmSync, chmodSync } from 'node:fs'
import os from 'node:os'
import path from 'node:path'
import type { Express } from 'express'
import { freePort, startCluster, type Cluster } from '../../scripts/pg'
import { createApp } from '../../server/app'
import { createContext } from '../../server/bootstrap'
import type { AppContext } from '../../server/context'
import type { QueueRunner } from '../../server/jobs/queue-runner'
import { CSRF, demo, signedIn } from '../helpers/app'
import { TEST_EXECUTOR, getRun, insertRun, killAllWorkers, runFixture, startWorker, sumOfSquares, waitFor } from '../helpers/jobs'

let root: string
let port: number
let cluster: Cluster
let context: AppContext
let app: Express

const start = () => startCluster({ dataDir: path.join(root, 'pgdata'), port, db: 'pewter_restart', quiet: true })

beforeAll(async () => {
  root = mkdtempSync(path.join(os.tmpdir(), 'pewter-restart-'))
  chmodSync(root, 0o755)
  port = await freePort()
  cluster = await start()
  context = await createContext({ databaseUrl: cluster.url, rateLimitAuth: 10_000, jobMode: 'queue', runExecutor: TEST_EXECUTOR, jobStaleSeconds: 3, jobMaxAttempts: 3 })
  app = createApp(context, { serveClient: false })
})

afterAll(async () => {
  await killAllWorkers()
  await context?.database.close().catch(() => {})
  cluster?.stop()
  if (root) rmSync(root, { recursive: true, force: true })
})

describe('a PostgreSQL restart', () => {
  it('health answers 503 with the reason while the database is away and 200 after; the server and a worker survive and the running fit resumes', async () => {
    const fx = await runFixture(context.db)
    const agent = await signedIn(app, demo.modeler)
    expect((await request(app).get('/api/health')).status).toBe(200)

    const worker = await startWorker(cluster.url, 'worker-restart')
    const id = await insertRun(context.db, fx, { steps: 60, stepMs: 60 })
    await (context.services.jobs as QueueRunner).enqueue(id)
    await waitFor('the fit to be running', async () => (((await getRun(context.db, id)).progress as { iteration?: number } | null)?.iteration ?? 0) >= 2)

    cluster.stop()
    const down = await request(app).get('/api/health')
    expect(down.status).toBe(503)
    expect(down.body).toMatchObject({ ok: false, db: false })
    expect(down.body.reason).toMatch(/database is unreachable/)
    // a signed-in request answers 503 with a message too (the session store is in the database)
    const listed = await agent.get('/api/workspaces/tinmoor/projects')
    expect(listed.status).toBe(503)
    expect(listed.body.error.message).toMatch(/database is unreachable/)
    // let the idle connections' errors and the worker's failed polls happen
    await new Promise((r) => setTimeout(r, 2500))
    expect(worker.child.exitCode, worker.output()).toBeNull()
    expect(worker.child.signalCode).toBeNull()

    cluster = await start()
    await waitFor('health 200 again', async () => (await request(app).get('/api/health')).status === 200, 30_000)
    expect((await agent.get('/api/workspaces/tinmoor/projects')).status).toBe(200)
    expect((await agent.post('/api/workspaces/tinmoor/projects').set(CSRF).send({ name: 'After the restart (synthetic)' })).status).toBe(201)

    // the fit is resumed by the same worker (its heartbeat went stale, the reaper queued it again) or failed with a reason
    const run = await waitFor('the fit to end', async () => { const r = await getRun(context.db, id); return ['succeeded', 'failed'].includes(r.status) && r }, 60_000)
    if (run.status === 'succeeded') expect(run.result).toMatchObject({ sumOfSquares: sumOfSquares(60) })
    else expect(run.error).toBeTruthy()
    expect(run.status, `${run.status}: ${run.error}\n${worker.output()}`).toBe('succeeded')
    expect(worker.child.exitCode).toBeNull()
    await worker.kill('SIGTERM')
  })
})

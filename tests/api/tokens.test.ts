/** API tokens: hashed at rest, shown once, bound to one workspace, role capped; the CLI submits a fit with one. */
import { seededDemoProject } from '../helpers/demo-project'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import request from 'supertest'
import { createHash } from 'node:crypto'
import type { AddressInfo } from 'node:net'
import type { Server } from 'node:http'
import { and, eq } from 'drizzle-orm'
import { CSRF, demo, makeTestApp, signedIn, type TestApp } from '../helpers/app'
import { apiTokens, memberships, runs, users, workspaces } from '../../server/db/schema'
import { createWorkspace } from '../../server/services/workspaces'
import { run as submitCli } from '../../server/cli/submit'
import { ThreadRunner } from '../../server/jobs/thread-runner'

let t: TestApp
beforeAll(async () => { t = await makeTestApp('tokens', { smtpUrl: 'smtp://127.0.0.1:9' }) })
afterAll(async () => { await t?.close() })

const bearer = (token: string) => ({ Authorization: `Bearer ${token}` })
const sha256 = (s: string) => createHash('sha256').update(s).digest('hex')

async function tokenFor(email: string, role: string, name = `${role} token`) {
  const agent = await signedIn(t.app, email)
  const r = await agent.post('/api/workspaces/tinmoor/tokens').set(CSRF).send({ name, role })
  if (r.status !== 201) throw new Error(`token: ${r.status} ${JSON.stringify(r.body)}`)
  return { agent, token: r.body.token as string, id: r.body.id as number, body: r.body }
}

describe('creating and listing', () => {
  it('shows the secret once and stores only its SHA-256', async () => {
    const { agent, token, id, body } = await tokenFor(demo.modeler, 'modeler', 'ci pipeline')
    expect(token).toMatch(/^pwt_[A-Za-z0-9_-]{43}$/)
    expect(body).toMatchObject({ name: 'ci pipeline', role: 'modeler', prefix: token.slice(0, 12), owner: { name: 'Moss Calder (modeler)' } })
    const [row] = await t.context.db.select().from(apiTokens).where(eq(apiTokens.id, id))
    expect(row.tokenHash).toBe(sha256(token))
    expect(JSON.stringify(row)).not.toContain(token.slice(12))
    const list = await agent.get('/api/workspaces/tinmoor/tokens')
    expect(list.status).toBe(200)
    expect(JSON.stringify(list.body)).not.toContain(token)
    expect(list.body.tokens.find((x: { id: number }) => x.id === id)).toMatchObject({ name: 'ci pipeline', revokedAt: null })
    const audit = await (await signedIn(t.app, demo.admin)).get('/api/workspaces/tinmoor/audit?action=token.created')
    expect(audit.body.entries[0]).toMatchObject({ actor: { email: demo.modeler }, details: { tokenId: id, role: 'modeler' } })
  })

  it('refuses a role higher than the creator’s', async () => {
    const agent = await signedIn(t.app, demo.viewer)
    const r = await agent.post('/api/workspaces/tinmoor/tokens').set(CSRF).send({ name: 'sneaky', role: 'modeler' })
    expect(r.status).toBe(403)
    expect(r.body.error.message).toMatch(/cannot be higher than yours/)
  })
})

describe('using a token', () => {
  it('authenticates without a session or CSRF header and records its use', async () => {
    const { token, id } = await tokenFor(demo.modeler, 'modeler')
    const read = await request(t.app).get('/api/workspaces/tinmoor/projects').set(bearer(token))
    expect(read.status).toBe(200)
    const write = await request(t.app).post('/api/workspaces/tinmoor/projects').set(bearer(token)).send({ name: 'made by a token' })
    expect(write.status).toBe(201)
    const [row] = await t.context.db.select().from(apiTokens).where(eq(apiTokens.id, id))
    expect(row.lastUsedAt).not.toBeNull()
  })

  it('a viewer’s token cannot write; a modeler’s viewer-role token cannot write either', async () => {
    const viewer = await tokenFor(demo.viewer, 'viewer')
    expect((await request(t.app).get('/api/workspaces/tinmoor/projects').set(bearer(viewer.token))).status).toBe(200)
    const w1 = await request(t.app).post('/api/workspaces/tinmoor/projects').set(bearer(viewer.token)).send({ name: 'no' })
    expect(w1.status).toBe(403)
    const capped = await tokenFor(demo.modeler, 'viewer', 'read-only dashboards')
    const w2 = await request(t.app).post('/api/workspaces/tinmoor/projects').set(bearer(capped.token)).send({ name: 'no' })
    expect(w2.status).toBe(403)
    expect(w2.body.error.message).toMatch(/viewer/)
  })

  it('a token is bound to its workspace: another workspace of the same user answers 404', async () => {
    const { token } = await tokenFor(demo.modeler, 'modeler')
    const [me] = await t.context.db.select().from(users).where(eq(users.email, demo.modeler))
    const other = await createWorkspace(t.context.db, 'Moss side workspace', me.id)
    const agent = await signedIn(t.app, demo.modeler)
    expect((await agent.get(`/api/workspaces/${other.slug}/projects`)).status).toBe(200)
    expect((await request(t.app).get(`/api/workspaces/${other.slug}/projects`).set(bearer(token))).status).toBe(404)
  })

  it('a lowered member role caps the token at once', async () => {
    const { token } = await tokenFor(demo.modeler2, 'modeler')
    const [u] = await t.context.db.select().from(users).where(eq(users.email, demo.modeler2))
    const [ws] = await t.context.db.select().from(workspaces).where(eq(workspaces.slug, 'tinmoor'))
    await t.context.db.update(memberships).set({ role: 'viewer' }).where(and(eq(memberships.userId, u.id), eq(memberships.workspaceId, ws.id)))
    expect((await request(t.app).post('/api/workspaces/tinmoor/projects').set(bearer(token)).send({ name: 'x' })).status).toBe(403)
    await t.context.db.update(memberships).set({ role: 'modeler' }).where(and(eq(memberships.userId, u.id), eq(memberships.workspaceId, ws.id)))
  })

  it('a revoked, unknown or malformed token answers 401; a token cannot create tokens', async () => {
    const { agent, token, id } = await tokenFor(demo.modeler, 'modeler')
    expect((await request(t.app).post('/api/workspaces/tinmoor/tokens').set(bearer(token)).send({ name: 'child', role: 'viewer' })).status).toBe(403)
    expect((await agent.delete(`/api/workspaces/tinmoor/tokens/${id}`).set(CSRF)).status).toBe(204)
    const revoked = await request(t.app).get('/api/workspaces/tinmoor/projects').set(bearer(token))
    expect(revoked.status).toBe(401)
    expect(revoked.body.error.message).toMatch(/invalid or revoked/)
    expect((await request(t.app).get('/api/workspaces/tinmoor/projects').set(bearer('pwt_' + 'x'.repeat(43)))).status).toBe(401)
    expect((await request(t.app).get('/api/workspaces/tinmoor/projects').set(bearer('nonsense'))).status).toBe(401)
    expect((await agent.delete(`/api/workspaces/tinmoor/tokens/${id}`).set(CSRF)).status).toBe(404)
  })

  it('members revoke only their own tokens; an admin sees and revokes anyone’s', async () => {
    const mine = await tokenFor(demo.modeler, 'modeler', 'mine')
    const reviewer = await signedIn(t.app, demo.reviewer)
    expect((await reviewer.delete(`/api/workspaces/tinmoor/tokens/${mine.id}`).set(CSRF)).status).toBe(404)
    const admin = await signedIn(t.app, demo.admin)
    const all = await admin.get('/api/workspaces/tinmoor/tokens')
    expect(all.body.tokens.some((x: { id: number }) => x.id === mine.id)).toBe(true)
    expect((await admin.delete(`/api/workspaces/tinmoor/tokens/${mine.id}`).set(CSRF)).status).toBe(204)
    expect((await request(t.app).get('/api/workspaces/tinmoor/projects').set(bearer(mine.token))).status).toBe(401)
  })
})

describe('pewter submit', () => {
  let server: Server
  let base = ''
  beforeAll(async () => {
    server = t.app.listen(0, '127.0.0.1')
    await new Promise<void>((r) => server.once('listening', () => r()))
    base = `http://127.0.0.1:${(server.address() as AddressInfo).port}`
  })
  afterAll(async () => { await new Promise<void>((r) => server.close(() => r())) })

  const io = () => {
    const out: string[] = []
    const err: string[] = []
    return { out, err, io: { fetch: (...a: Parameters<typeof fetch>) => fetch(...a), out: (s: string) => { out.push(s) }, err: (s: string) => { err.push(s) }, sleep: (ms: number) => new Promise<void>((r) => setTimeout(r, Math.min(ms, 300))) } }
  }

  it('submits a fit of the demo project with a token and waits for the result computed in a worker thread', async () => {
    expect(t.context.services.jobs).toBeInstanceOf(ThreadRunner)
    const { project, run: seeded, estimation: est, validation: val } = await seededDemoProject(t.context.db)
    const { token } = await tokenFor(demo.modeler, 'modeler', 'cli')
    const c = io()
    const code = await submitCli([
      '--workspace', 'tinmoor', '--project', String(project.id), '--model', String(seeded.modelId), '--version', String(seeded.modelVersion),
      '--estimation', String(est.id), '--validation', String(val.id), '--weighting', 'ml', '--seed', '1', '--wait', '--json',
    ], c.io, { PEWTER_SERVER: base, PEWTER_TOKEN: token })
    expect(c.err.join('')).toMatch(/queued/)
    expect(code).toBe(0)
    const result = JSON.parse(c.out.join(''))
    const [submitted] = await t.context.db.select().from(runs).where(eq(runs.id, Number(/run (\d+) queued/.exec(c.err.join(''))![1])))
    expect(submitted.status).toBe('succeeded')
    expect(submitted.workerId).toBe((t.context.services.jobs as ThreadRunner).pool.workerId)
    expect(submitted.createdBy).toBe((await t.context.db.select().from(users).where(eq(users.email, demo.modeler)))[0].id)
    // the same run settings as the seeded in-process fit give the same estimates (reproducible, seeded synthetic data)
    const names = (r: { parameters?: { name: string; value: number }[] }) => Object.fromEntries((r.parameters ?? []).map((p) => [p.name, p.value]))
    const seededResult = seeded.result as { parameters?: { name: string; value: number }[] }
    expect(Object.keys(names(result)).length).toBeGreaterThan(0)
    expect(Object.keys(names(result))).toEqual(Object.keys(names(seededResult)))
    for (const [k, v] of Object.entries(names(seededResult))) expect(names(result)[k] / v).toBeCloseTo(1, 6)
  }, 120_000)

  it('a viewer token is refused with the server’s message and exit code 3; bad arguments give 2', async () => {
    const { token } = await tokenFor(demo.viewer, 'viewer', 'cli-viewer')
    const c = io()
    const code = await submitCli(['--workspace', 'tinmoor', '--project', '1', '--model', '1', '--version', '1', '--estimation', '1'], c.io, { PEWTER_SERVER: base, PEWTER_TOKEN: token })
    expect(code).toBe(3)
    expect(c.err.join('')).toMatch(/HTTP 403/)
    const d = io()
    expect(await submitCli(['--workspace', 'tinmoor', '--project', 'x'], d.io, { PEWTER_TOKEN: token })).toBe(2)
    expect(d.err.join('')).toMatch(/--project: expected a whole number/)
    const e = io()
    expect(await submitCli(['--workspace', 'tinmoor', '--project', '1', '--model', '1', '--version', '1', '--estimation', '1'], e.io, {})).toBe(2)
    expect(e.err.join('')).toMatch(/PEWTER_TOKEN/)
  })
})

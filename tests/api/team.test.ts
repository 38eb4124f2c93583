/** Team administration: members, roles, the last-admin rule, pending invitations and the audit log. */
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import request from 'supertest'
import { eq } from 'drizzle-orm'
import { CSRF, demo, makeTestApp, signedIn, type TestApp } from '../helpers/app'
import { memberships, users, workspaces } from '../../server/db/schema'
import { signUpVerified } from '../helpers/signup'
import { drainSheet } from './library-sheets'

let t: TestApp
beforeAll(async () => { t = await makeTestApp('team', { smtpUrl: 'smtp://127.0.0.1:9' }) })
afterAll(async () => { await t?.close() })

const idOf = async (email: string) => (await t.context.db.select({ id: users.id }).from(users).where(eq(users.email, email)))[0].id

describe('members', () => {
  it('every member lists the members with their roles', async () => {
    const viewer = await signedIn(t.app, demo.viewer)
    const r = await viewer.get('/api/workspaces/tinmoor/members')
    expect(r.status).toBe(200)
    const byEmail = Object.fromEntries(r.body.members.map((m: { email: string; role: string }) => [m.email, m.role]))
    expect(byEmail).toMatchObject({ [demo.admin]: 'admin', [demo.modeler]: 'modeler', [demo.reviewer]: 'reviewer', [demo.viewer]: 'viewer' })
  })

  it('only an admin changes roles or removes members (403 otherwise)', async () => {
    const modeler = await signedIn(t.app, demo.modeler)
    const vid = await idOf(demo.viewer)
    expect((await modeler.patch(`/api/workspaces/tinmoor/members/${vid}`).set(CSRF).send({ role: 'modeler' })).status).toBe(403)
    expect((await modeler.delete(`/api/workspaces/tinmoor/members/${vid}`).set(CSRF)).status).toBe(403)
    expect((await modeler.get('/api/workspaces/tinmoor/invitations')).status).toBe(403)
    expect((await modeler.get('/api/workspaces/tinmoor/audit')).status).toBe(403)
    expect((await modeler.post('/api/workspaces/tinmoor/invitations').set(CSRF).send({ email: 'x@example.org', role: 'viewer' })).status).toBe(403)
  })

  it('an admin changes a role, which takes effect at once and is audited with who and what', async () => {
    const admin = await signedIn(t.app, demo.admin)
    const viewer = await signedIn(t.app, demo.viewer)
    expect((await viewer.post('/api/workspaces/tinmoor/projects').set(CSRF).send({ name: 'by viewer' })).status).toBe(403)
    const vid = await idOf(demo.viewer)
    const r = await admin.patch(`/api/workspaces/tinmoor/members/${vid}`).set(CSRF).send({ role: 'modeler' })
    expect(r.status).toBe(200)
    expect(r.body.members.find((m: { userId: number }) => m.userId === vid).role).toBe('modeler')
    expect((await viewer.post('/api/workspaces/tinmoor/projects').set(CSRF).send({ name: 'by promoted viewer' })).status).toBe(201)
    const audit = await admin.get('/api/workspaces/tinmoor/audit?action=member.role_changed')
    expect(audit.body.entries[0]).toMatchObject({ action: 'member.role_changed', target: `user:${vid}`, details: { from: 'viewer', to: 'modeler' }, actor: { email: demo.admin } })
    expect(new Date(audit.body.entries[0].createdAt).getTime()).toBeGreaterThan(Date.now() - 60_000)
    await admin.patch(`/api/workspaces/tinmoor/members/${vid}`).set(CSRF).send({ role: 'viewer' })
  })

  it('an unknown role or member answers 400 / 404', async () => {
    const admin = await signedIn(t.app, demo.admin)
    const bad = await admin.patch(`/api/workspaces/tinmoor/members/${await idOf(demo.viewer)}`).set(CSRF).send({ role: 'owner' })
    expect(bad.status).toBe(400)
    expect(bad.body.error.details[0].path).toBe('body.role')
    expect((await admin.patch('/api/workspaces/tinmoor/members/999999').set(CSRF).send({ role: 'viewer' })).status).toBe(404)
  })
})

describe('the last admin', () => {
  it('cannot be demoted or removed; with a second admin, one may step down — never both at once', async () => {
    const admin = await signedIn(t.app, demo.admin)
    const aid = await idOf(demo.admin)
    const demote = await admin.patch(`/api/workspaces/tinmoor/members/${aid}`).set(CSRF).send({ role: 'modeler' })
    expect(demote.status).toBe(409)
    expect(demote.body.error.message).toMatch(/last admin/)
    expect((await admin.delete(`/api/workspaces/tinmoor/members/${aid}`).set(CSRF)).status).toBe(409)

    const rid = await idOf(demo.reviewer)
    expect((await admin.patch(`/api/workspaces/tinmoor/members/${rid}`).set(CSRF).send({ role: 'admin' })).status).toBe(200)
    const second = await signedIn(t.app, demo.reviewer)
    // both admins demote each other at the same moment: exactly one wins
    const [x, y] = await Promise.all([
      admin.patch(`/api/workspaces/tinmoor/members/${rid}`).set(CSRF).send({ role: 'reviewer' }),
      second.patch(`/api/workspaces/tinmoor/members/${aid}`).set(CSRF).send({ role: 'reviewer' }),
    ])
    // the loser is refused either by the last-admin rule (409) or, when the winner committed before the
    // loser's request was authorized, because the loser is no longer an admin (403)
    const statuses = [x.status, y.status].sort()
    expect(statuses[0]).toBe(200)
    expect([403, 409]).toContain(statuses[1])
    const admins = (await (await signedIn(t.app, x.status === 200 ? demo.admin : demo.reviewer)).get('/api/workspaces/tinmoor/members')).body.members.filter((m: { role: string }) => m.role === 'admin')
    expect(admins).toHaveLength(1)
    // restore: demo admin is admin, reviewer is reviewer
    const remaining = await signedIn(t.app, admins[0].email)
    if (admins[0].email !== demo.admin) {
      await remaining.patch(`/api/workspaces/tinmoor/members/${aid}`).set(CSRF).send({ role: 'admin' })
      await (await signedIn(t.app, demo.admin)).patch(`/api/workspaces/tinmoor/members/${rid}`).set(CSRF).send({ role: 'reviewer' })
    }
  })

  it('removing a member ends their access and revokes their tokens', async () => {
    const { agent: person } = await signUpVerified(t, { email: 'temp.worker@example.org', password: 'long-enough-5', name: 'Temp Worker' })
    const pid = await idOf('temp.worker@example.org')
    const [ws] = await t.context.db.select().from(workspaces).where(eq(workspaces.slug, 'tinmoor'))
    await t.context.db.insert(memberships).values({ workspaceId: ws.id, userId: pid, role: 'modeler' })
    const token = (await person.post('/api/workspaces/tinmoor/tokens').set(CSRF).send({ name: 'laptop', role: 'modeler' })).body.token as string
    expect((await request(t.app).get('/api/workspaces/tinmoor/projects').set('Authorization', `Bearer ${token}`)).status).toBe(200)
    const admin = await signedIn(t.app, demo.admin)
    expect((await admin.delete(`/api/workspaces/tinmoor/members/${pid}`).set(CSRF)).status).toBe(204)
    expect((await person.get('/api/workspaces/tinmoor/projects')).status).toBe(404)
    expect((await request(t.app).get('/api/workspaces/tinmoor/projects').set('Authorization', `Bearer ${token}`)).status).toBe(401)
    const audit = await admin.get('/api/workspaces/tinmoor/audit?action=member.removed')
    expect(audit.body.entries[0]).toMatchObject({ target: 'temp.worker@example.org', details: { userId: pid, role: 'modeler' } })
  })
})

describe('pending invitations', () => {
  it('lists pending invitations, replaces a repeated one, refuses inviting a member', async () => {
    const admin = await signedIn(t.app, demo.admin)
    expect((await admin.post('/api/workspaces/tinmoor/invitations').set(CSRF).send({ email: 'pending@example.org', role: 'viewer' })).status).toBe(201)
    expect((await admin.post('/api/workspaces/tinmoor/invitations').set(CSRF).send({ email: 'pending@example.org', role: 'reviewer' })).status).toBe(201)
    const list = await admin.get('/api/workspaces/tinmoor/invitations')
    const pending = list.body.invitations.filter((i: { email: string }) => i.email === 'pending@example.org')
    expect(pending).toHaveLength(1)
    expect(pending[0]).toMatchObject({ role: 'reviewer', invitedBy: 'Ada Tinmoor (admin)' })
    expect(new Date(pending[0].expiresAt).getTime()).toBeGreaterThan(Date.now() + 6 * 86400_000)
    const dup = await admin.post('/api/workspaces/tinmoor/invitations').set(CSRF).send({ email: demo.modeler, role: 'viewer' })
    expect(dup.status).toBe(409)
    const bad = await admin.post('/api/workspaces/tinmoor/invitations').set(CSRF).send({ email: 'not-an-address', role: 'viewer' })
    expect(bad.status).toBe(400)
    expect(bad.body.error.details[0].path).toBe('body.email')
  })
})

describe('audit log', () => {
  it('records sign-in and failed sign-in of members with who and when, newest first, paged by id', async () => {
    await signedIn(t.app, demo.modeler)
    await request(t.app).post('/api/auth/signin').set(CSRF).send({ email: demo.modeler, password: 'wrong-password' })
    const admin = await signedIn(t.app, demo.admin)
    const r = await admin.get('/api/workspaces/tinmoor/audit?limit=3')
    expect(r.status).toBe(200)
    expect(r.body.entries).toHaveLength(3)
    const ids = r.body.entries.map((e: { id: number }) => e.id)
    expect([...ids].sort((a, b) => b - a)).toEqual(ids)
    const failed = await admin.get('/api/workspaces/tinmoor/audit?action=auth.signin_failed')
    expect(failed.body.entries[0]).toMatchObject({ action: 'auth.signin_failed', target: demo.modeler, actor: { email: demo.modeler } })
    const signin = await admin.get('/api/workspaces/tinmoor/audit?action=auth.signin')
    expect(signin.body.entries.some((e: { actor: { email: string } }) => e.actor.email === demo.modeler)).toBe(true)
    const next = await admin.get(`/api/workspaces/tinmoor/audit?limit=3&before=${r.body.next}`)
    expect(next.body.entries[0].id).toBeLessThan(ids[2])
  })

  it('does not show another workspace its members’ events', async () => {
    const { agent: outsider, me } = await signUpVerified(t, { email: 'elsewhere@example.org', password: 'long-enough-6', name: 'Elsewhere' })
    const own = me.workspaces[0].slug
    const r = await outsider.get(`/api/workspaces/${own}/audit`)
    expect(r.status).toBe(200)
    expect(r.body.entries.every((e: { actor: { email: string } | null }) => !e.actor || e.actor.email === 'elsewhere@example.org')).toBe(true)
  })
})

describe('the four-eyes rule', () => {
  it('off by default; an admin turns it on (audited) and then nobody approves a version they wrote', async () => {
    const admin = await signedIn(t.app, demo.admin)
    const reviewer = await signedIn(t.app, demo.reviewer)
    const modeler = await signedIn(t.app, demo.modeler)
    expect((await reviewer.get('/api/workspaces/tinmoor/settings')).body).toEqual({ fourEyes: false })
    const refused = await modeler.put('/api/workspaces/tinmoor/settings').set(CSRF).send({ fourEyes: true })
    expect(refused.status).toBe(403)

    const mine = await admin.post('/api/workspaces/tinmoor/models').set(CSRF).send({ title: 'Four-eyes drain', text: drainSheet })
    expect(mine.status).toBe(201)
    const on = await admin.put('/api/workspaces/tinmoor/settings').set(CSRF).send({ fourEyes: true })
    expect(on.status).toBe(200)
    expect(on.body).toEqual({ fourEyes: true })
    const audit = await admin.get('/api/workspaces/tinmoor/audit?action=workspace.settings_changed')
    expect(audit.body.entries[0]).toMatchObject({ actor: { email: demo.admin }, details: { before: { fourEyes: false }, after: { fourEyes: true } } })

    const self = await admin.post(`/api/workspaces/tinmoor/models/${mine.body.id}/versions/1/approve`).set(CSRF)
    expect(self.status).toBe(403)
    expect(self.body.error.message).toMatch(/four-eyes rule: you wrote version 1/)
    const other = await reviewer.post(`/api/workspaces/tinmoor/models/${mine.body.id}/versions/1/approve`).set(CSRF)
    expect(other.status).toBe(200)
    expect(other.body.status).toBe('approved')

    // off again: an author may approve their own version
    expect((await admin.put('/api/workspaces/tinmoor/settings').set(CSRF).send({ fourEyes: false })).body).toEqual({ fourEyes: false })
    const second = await admin.post('/api/workspaces/tinmoor/models').set(CSRF).send({ title: 'Four-eyes drain two', text: drainSheet })
    expect((await admin.post(`/api/workspaces/tinmoor/models/${second.body.id}/versions/1/approve`).set(CSRF)).status).toBe(200)
  })
})

import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import request from 'supertest'
import { CSRF, demo, makeTestApp, signedIn, type TestApp } from '../helpers/app'
import { SESSION_COOKIE } from '../../server/auth/session'

let t: TestApp
beforeAll(async () => { t = await makeTestApp('auth') })
afterAll(async () => { await t.close() })

describe('sign-up, sign-in, sign-out', () => {
  it('signs up a new user who gets a workspace of their own as admin', async () => {
    const agent = request.agent(t.app)
    const r = await agent.post('/api/auth/signup').set(CSRF).send({ email: 'New.Person@Example.org', password: 'long-enough-1', name: 'New Person' })
    expect(r.status).toBe(201)
    expect(r.body.user.email).toBe('new.person@example.org')
    expect(r.body.workspaces).toHaveLength(1)
    expect(r.body.workspaces[0].role).toBe('admin')
    expect(r.body.currentWorkspaceId).toBe(r.body.workspaces[0].id)
    const me = await agent.get('/api/auth/me')
    expect(me.status).toBe(200)
    expect(me.body.user.name).toBe('New Person')
  })

  it('refuses a second sign-up with the same e-mail (409)', async () => {
    const r = await request(t.app).post('/api/auth/signup').set(CSRF).send({ email: 'new.person@example.org', password: 'long-enough-2', name: 'Again' })
    expect(r.status).toBe(409)
    expect(r.body.error.code).toBe('conflict')
  })

  it('signs in, keeps the session across requests, and signs out', async () => {
    const agent = request.agent(t.app)
    const r = await agent.post('/api/auth/signin').set(CSRF).send({ email: demo.modeler, password: 'pewter-demo' })
    expect(r.status).toBe(200)
    const cookie = String(r.headers['set-cookie'])
    expect(cookie).toContain(`${SESSION_COOKIE}=`)
    expect(cookie.toLowerCase()).toContain('httponly')
    expect(cookie.toLowerCase()).toContain('samesite=lax')
    expect((await agent.get('/api/auth/me')).body.user.email).toBe(demo.modeler)
    expect((await agent.get('/api/workspaces/tinmoor/projects')).status).toBe(200)
    expect((await agent.post('/api/auth/signout').set(CSRF)).status).toBe(204)
    expect((await agent.get('/api/auth/me')).status).toBe(401)
  })

  it('compresses large replies for clients that accept gzip', async () => {
    const agent = await signedIn(t.app, demo.modeler)
    const r = await agent.get('/api/workspaces/tinmoor/models').set('Accept-Encoding', 'gzip')
    expect(r.status).toBe(200)
    expect(JSON.stringify(r.body).length).toBeGreaterThan(1024)
    expect(r.headers['content-encoding']).toBe('gzip')
    const plain = await agent.get('/api/workspaces/tinmoor/models').set('Accept-Encoding', 'identity')
    expect(plain.headers['content-encoding']).toBeUndefined()
    expect(plain.body).toEqual(r.body)
  })

  it('answers the session question with 200 whether or not anyone is signed in', async () => {
    const agent = request.agent(t.app)
    const before = await agent.get('/api/auth/session')
    expect(before.status).toBe(200)
    expect(before.body).toEqual({ session: null })
    await agent.post('/api/auth/signin').set(CSRF).send({ email: demo.modeler, password: 'pewter-demo' })
    const after = await agent.get('/api/auth/session')
    expect(after.status).toBe(200)
    expect(after.body.session.user.email).toBe(demo.modeler)
  })

  it('regenerates the session id at sign-in (no session fixation)', async () => {
    const agent = request.agent(t.app)
    const first = await agent.post('/api/auth/signin').set(CSRF).send({ email: demo.viewer, password: 'pewter-demo' })
    const sid1 = /pewter\.sid=([^;]+)/.exec(String(first.headers['set-cookie']))?.[1]
    const second = await agent.post('/api/auth/signin').set(CSRF).send({ email: demo.viewer, password: 'pewter-demo' })
    const sid2 = /pewter\.sid=([^;]+)/.exec(String(second.headers['set-cookie']))?.[1]
    expect(sid1).toBeTruthy()
    expect(sid2).toBeTruthy()
    expect(sid2).not.toBe(sid1)
  })

  it('answers a wrong password and an unknown e-mail with the same 401', async () => {
    const wrong = await request(t.app).post('/api/auth/signin').set(CSRF).send({ email: demo.modeler, password: 'not-it' })
    const unknown = await request(t.app).post('/api/auth/signin').set(CSRF).send({ email: 'nobody@tinmoor.example', password: 'not-it' })
    expect(wrong.status).toBe(401)
    expect(unknown.status).toBe(401)
    expect(wrong.body).toEqual(unknown.body)
    expect(wrong.body.error.message).not.toMatch(/exist|unknown|no such/i)
  })

  it('stores passwords as bcrypt hashes with cost >= 10', async () => {
    const rows = await t.context.database.pool.query('select password_hash from users where email = $1', [demo.admin])
    const hash: string = rows.rows[0].password_hash
    expect(hash).toMatch(/^\$2[aby]\$\d\d\$/)
    expect(Number(hash.slice(4, 6))).toBeGreaterThanOrEqual(10)
  })

  it('switches the current workspace only to one the user belongs to', async () => {
    const agent = await signedIn(t.app, demo.admin)
    const me = (await agent.get('/api/auth/me')).body
    const ok = await agent.post('/api/auth/workspace').set(CSRF).send({ workspaceId: me.workspaces[0].id })
    expect(ok.status).toBe(200)
    const foreign = await agent.post('/api/auth/workspace').set(CSRF).send({ workspaceId: 999999 })
    expect(foreign.status).toBe(404)
  })
})

describe('validation', () => {
  it('answers 400 with the field paths of every problem', async () => {
    const r = await request(t.app).post('/api/auth/signup').set(CSRF).send({ email: 'not-an-email', password: 'short' })
    expect(r.status).toBe(400)
    expect(r.body.error.code).toBe('validation_failed')
    const paths = r.body.error.details.map((d: { path: string }) => d.path)
    expect(paths).toEqual(expect.arrayContaining(['body.email', 'body.password', 'body.name']))
  })

  it('answers 400 for malformed JSON and 413 for an oversized body', async () => {
    const bad = await request(t.app).post('/api/auth/signin').set(CSRF).set('Content-Type', 'application/json').send('{"email":')
    expect(bad.status).toBe(400)
    expect(bad.body.error.message).toMatch(/JSON/)
    const big = await request(t.app).post('/api/auth/signin').set(CSRF).send({ email: 'a@b.co', password: 'x'.repeat(3 * 1024 * 1024) })
    expect(big.status).toBe(413)
    expect(big.body.error.code).toBe('payload_too_large')
  })

  it('answers an invalid route parameter with 400 naming it', async () => {
    const agent = await signedIn(t.app, demo.viewer)
    const r = await agent.get('/api/workspaces/tinmoor/projects/abc')
    expect(r.status).toBe(400)
    expect(r.body.error.details[0].path).toBe('params.pid')
  })

  it('answers unknown API routes with a JSON 404', async () => {
    const r = await request(t.app).get('/api/no-such-thing')
    expect(r.status).toBe(404)
    expect(r.body.error.code).toBe('not_found')
  })
})

describe('roles', () => {
  const cases = [
    { who: 'admin', read: 200, write: 201 },
    { who: 'modeler', read: 200, write: 201 },
    { who: 'reviewer', read: 200, write: 403 },
    { who: 'viewer', read: 200, write: 403 },
  ] as const
  for (const c of cases) {
    it(`${c.who}: protected read ${c.read}, protected write ${c.write}`, async () => {
      const agent = await signedIn(t.app, demo[c.who])
      expect((await agent.get('/api/workspaces/tinmoor/projects')).status).toBe(c.read)
      const w = await agent.post('/api/workspaces/tinmoor/projects').set(CSRF).send({ name: `by ${c.who}` })
      expect(w.status).toBe(c.write)
      if (c.write === 403) expect(w.body.error.code).toBe('forbidden')
    })
  }

  it('refuses anonymous access with 401', async () => {
    expect((await request(t.app).get('/api/workspaces/tinmoor/projects')).status).toBe(401)
    expect((await request(t.app).get('/api/auth/me')).status).toBe(401)
  })

  it("answers another workspace's resources with 404", async () => {
    const outsider = request.agent(t.app)
    const s = await outsider.post('/api/auth/signup').set(CSRF).send({ email: 'outsider@example.org', password: 'long-enough-3', name: 'Outsider' })
    const ownWs = s.body.workspaces[0].slug
    const own = await outsider.post(`/api/workspaces/${ownWs}/projects`).set(CSRF).send({ name: 'mine' })
    expect(own.status).toBe(201)
    expect((await outsider.get('/api/workspaces/tinmoor/projects')).status).toBe(404)
    const demoAdmin = await signedIn(t.app, demo.admin)
    expect((await demoAdmin.get(`/api/workspaces/${ownWs}/projects/${own.body.id}`)).status).toBe(404)
    const demoProject = await demoAdmin.post('/api/workspaces/tinmoor/projects').set(CSRF).send({ name: 'ours' })
    expect((await outsider.get(`/api/workspaces/${ownWs}/projects/${demoProject.body.id}`)).status).toBe(404)
  })
})

describe('protection', () => {
  it('refuses a state-changing request from a foreign Origin', async () => {
    const agent = await signedIn(t.app, demo.modeler)
    const r = await agent.post('/api/workspaces/tinmoor/projects').set(CSRF).set('Origin', 'https://evil.example').send({ name: 'x' })
    expect(r.status).toBe(403)
    expect(r.body.error.message).toMatch(/Cross-site/)
  })

  it('refuses a cookie-authenticated state change without the CSRF header', async () => {
    const agent = await signedIn(t.app, demo.modeler)
    const r = await agent.post('/api/workspaces/tinmoor/projects').send({ name: 'x' })
    expect(r.status).toBe(403)
  })

  it('sends helmet security headers', async () => {
    const r = await request(t.app).get('/api/health')
    expect(r.headers['x-content-type-options']).toBe('nosniff')
    expect(r.headers['content-security-policy']).toContain("default-src 'self'")
    expect(r.headers['x-powered-by']).toBeUndefined()
  })

  it('reports the database in /api/health', async () => {
    const r = await request(t.app).get('/api/health')
    expect(r.status).toBe(200)
    expect(r.body).toEqual({ ok: true, db: true })
  })
})

describe('rate limit', () => {
  it('answers 429 after too many sign-in attempts', async () => {
    const limited = await makeTestApp('ratelimit', { rateLimitAuth: 3 }, { seed: false })
    try {
      const codes: number[] = []
      for (let i = 0; i < 5; i++) {
        codes.push((await request(limited.app).post('/api/auth/signin').set(CSRF).send({ email: 'x@example.org', password: 'whatever' })).status)
      }
      expect(codes.slice(0, 3)).toEqual([401, 401, 401])
      expect(codes[3]).toBe(429)
      expect(codes[4]).toBe(429)
    } finally {
      await limited.close()
    }
  })
})

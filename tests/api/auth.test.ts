import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import request from 'supertest'
import { CSRF, demo, makeTestApp, signedIn, type TestApp } from '../helpers/app'
import { eq } from 'drizzle-orm'
import { SESSION_COOKIE } from '../../server/auth/session'
import { BCRYPT_COST, bcryptCost, isCommonPassword } from '../../server/auth/passwords'
import { nameProblem } from '../../shared/api/text'
import { users } from '../../server/db/schema'
import { seedDemo } from '../../server/db/seed'
import { capturedMail, mailTo, signUpVerified, verificationToken } from '../helpers/signup'

let t: TestApp
beforeAll(async () => { t = await makeTestApp('auth') })
afterAll(async () => { await t.close() })

describe('sign-up with e-mail verification, sign-in, sign-out', () => {
  it('signs up: 202 without a session, a mailed link plus the chosen password create the account with its own workspace', async () => {
    const after = capturedMail(t.context).length
    const agent = request.agent(t.app)
    const r = await agent.post('/api/auth/signup').set(CSRF).send({ email: 'New.Person@Example.org', password: 'long-enough-1', name: 'New Person' })
    expect(r.status).toBe(202)
    expect(r.body.message).toMatch(/Check your mail/)
    expect((await agent.get('/api/auth/me')).status).toBe(401)
    const mail = await mailTo(t.context, 'new.person@example.org', /Confirm your e-mail/, after)
    expect(mail.text).toMatch(/no account is created/)
    const token = verificationToken(mail)
    expect((await t.context.db.select().from(users).where(eq(users.email, 'new.person@example.org')))).toHaveLength(0)
    expect((await request(t.app).get(`/api/auth/verify-email/${token}`)).body).toEqual({ email: 'new.person@example.org', signup: true })

    // someone who clicks the link without knowing the password chosen at sign-up gets nothing
    const stranger = await request(t.app).post(`/api/auth/verify-email/${token}`).set(CSRF).send({ password: 'not-the-one-1' })
    expect(stranger.status).toBe(401)
    expect(stranger.body.error.details[0].path).toBe('body.password')

    const v = await agent.post(`/api/auth/verify-email/${token}`).set(CSRF).send({ password: 'long-enough-1' })
    expect(v.status).toBe(200)
    expect(v.body.created).toBe(true)
    expect(v.body.me.user).toMatchObject({ email: 'new.person@example.org', name: 'New Person', emailVerified: true })
    expect(v.body.me.workspaces).toHaveLength(1)
    expect(v.body.me.workspaces[0].role).toBe('admin')
    expect(v.body.me.currentWorkspaceId).toBe(v.body.me.workspaces[0].id)
    expect((await agent.get('/api/auth/me')).body.user.name).toBe('New Person')
    expect((await request(t.app).post(`/api/auth/verify-email/${token}`).set(CSRF).send({ password: 'long-enough-1' })).status).toBe(410)
  })

  it('answers a sign-up for a known address exactly as for a new one, mails the owner a notice and changes nothing', async () => {
    const after = capturedMail(t.context).length
    const known = await request(t.app).post('/api/auth/signup').set(CSRF).send({ email: demo.viewer, password: 'takeover-try-1', name: 'Not Vale' })
    const fresh = await request(t.app).post('/api/auth/signup').set(CSRF).send({ email: 'brand.new@example.org', password: 'takeover-try-1', name: 'Brand New' })
    expect(known.status).toBe(202)
    expect(fresh.status).toBe(202)
    expect(known.body).toEqual(fresh.body)
    expect(known.headers['set-cookie']).toBeUndefined()
    expect(fresh.headers['set-cookie']).toBeUndefined()
    const notice = await mailTo(t.context, demo.viewer, /tried to create a Pewter account/, after)
    expect(notice.text).toMatch(/No new account was made and nothing changed/)
    await mailTo(t.context, 'brand.new@example.org', /Confirm your e-mail/, after)
    expect(capturedMail(t.context).slice(after).some((m) => m.to === demo.viewer && /verify-email/.test(m.text))).toBe(false)
    expect((await request(t.app).post('/api/auth/signin').set(CSRF).send({ email: demo.viewer, password: 'takeover-try-1' })).status).toBe(401)
    expect((await request(t.app).post('/api/auth/signin').set(CSRF).send({ email: demo.viewer, password: 'pewter-demo' })).status).toBe(200)
  })

  it('an unconfirmed account asks for a link and confirms its address with it', async () => {
    const { agent } = await signUpVerified(t, { email: 'legacy.user@example.org', password: 'long-enough-2', name: 'Legacy User' })
    // an account from before confirmation existed
    await t.context.db.update(users).set({ emailVerifiedAt: null }).where(eq(users.email, 'legacy.user@example.org'))
    expect((await agent.get('/api/auth/me')).body.user.emailVerified).toBe(false)
    const after = capturedMail(t.context).length
    expect((await agent.post('/api/auth/verify-email').set(CSRF)).status).toBe(202)
    const token = verificationToken(await mailTo(t.context, 'legacy.user@example.org', /Confirm your e-mail/, after))
    expect((await request(t.app).get(`/api/auth/verify-email/${token}`)).body.signup).toBe(false)
    expect((await request(t.app).post(`/api/auth/verify-email/${token}`).set(CSRF).send({})).status).toBe(200)
    expect((await agent.get('/api/auth/me')).body.user.emailVerified).toBe(true)
    expect((await agent.post('/api/auth/verify-email').set(CSRF)).status).toBe(409)
  })

  it('the demo users are confirmed, also on an install seeded before confirmation existed', async () => {
    const me = (await (await signedIn(t.app, demo.reviewer)).get('/api/auth/me')).body
    expect(me.user.emailVerified).toBe(true)
    await t.context.db.update(users).set({ emailVerifiedAt: null }).where(eq(users.email, demo.reviewer))
    expect(await seedDemo(t.context.db)).toBe(false)
    const [row] = await t.context.db.select().from(users).where(eq(users.email, demo.reviewer))
    expect(row.emailVerifiedAt).not.toBeNull()
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

  it('stores passwords as bcrypt hashes; the cost is 12 unless a test run lowers it', async () => {
    const rows = await t.context.database.pool.query('select password_hash from users where email = $1', [demo.admin])
    const hash: string = rows.rows[0].password_hash
    expect(hash).toMatch(/^\$2[aby]\$\d\d\$/)
    expect(Number(hash.slice(4, 6))).toBe(BCRYPT_COST)
    expect(bcryptCost({})).toBe(12)
    expect(bcryptCost({ NODE_ENV: 'production', PEWTER_BCRYPT_COST: '4' })).toBe(12)
    expect(bcryptCost({ NODE_ENV: 'test', PEWTER_BCRYPT_COST: '6' })).toBe(6)
    expect(bcryptCost({ NODE_ENV: 'test', PEWTER_BCRYPT_COST: '2' })).toBe(12)
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

  it('refuses passwords longer than 72 bytes (bcrypt would ignore the rest) and the most common passwords', async () => {
    // 36 × "é" is 36 characters but 72 bytes in UTF-8: accepted; one more byte is refused
    const atLimit = await request(t.app).post('/api/auth/signup').set(CSRF).send({ email: 'bytes@example.org', password: 'é'.repeat(36), name: 'Bytes' })
    expect(atLimit.status).toBe(202)
    const over = await request(t.app).post('/api/auth/signup').set(CSRF).send({ email: 'bytes@example.org', password: `${'é'.repeat(36)}x`, name: 'Bytes' })
    expect(over.status).toBe(400)
    expect(over.body.error.details[0]).toMatchObject({ path: 'body.password' })
    expect(over.body.error.details[0].message).toMatch(/at most 72 bytes/)
    // "password1" and "iloveyou" head every published list of leaked passwords (the package's list is used)
    for (const common of ['password1', 'ILoveYou', 'qwertyuiop']) {
      const r = await request(t.app).post('/api/auth/signup').set(CSRF).send({ email: 'common@example.org', password: common, name: 'Common' })
      expect(r.status).toBe(400)
      expect(r.body.error.details[0].path).toBe('body.password')
      expect(r.body.error.message).toMatch(/most common/)
    }
    expect(isCommonPassword('long-enough-1')).toBe(false)
  })

  it('refuses names and titles made of invisible characters or carrying direction controls, naming the field', async () => {
    const blank = await request(t.app).post('/api/auth/signup').set(CSRF).send({ email: 'blank@example.org', password: 'long-enough-1', name: '\u200B\u2060\uFEFF' })
    expect(blank.status).toBe(400)
    expect(blank.body.error.details[0]).toEqual({ path: 'body.name', message: 'the name has no visible character' })
    const filler = await request(t.app).post('/api/auth/signup').set(CSRF).send({ email: 'blank@example.org', password: 'long-enough-1', name: '\u3164\u3164' })
    expect(filler.status).toBe(400)
    const agent = await signedIn(t.app, demo.modeler)
    const rlo = await agent.post('/api/workspaces/tinmoor/projects').set(CSRF).send({ name: 'Boiler \u202Efdp.exe' })
    expect(rlo.status).toBe(400)
    expect(rlo.body.error.details[0].path).toBe('body.name')
    expect(rlo.body.error.details[0].message).toMatch(/the project name contains a direction-control character/)
    const model = await agent.post('/api/workspaces/tinmoor/models').set(CSRF).send({ title: '\u200E\u200F', text: 'x' })
    expect(model.status).toBe(400)
    expect(model.body.error.details.some((d: { path: string; message: string }) => d.path === 'body.title' && /the model title/.test(d.message))).toBe(true)
    const token = await agent.post('/api/workspaces/tinmoor/tokens').set(CSRF).send({ name: '\u00A0\u2800', role: 'viewer' })
    expect(token.status).toBe(400)
    expect(token.body.error.details[0]).toEqual({ path: 'body.name', message: 'the token name has no visible character' })
    // ordinary names in any script pass
    expect(nameProblem('Rührkessel R-2 (Ölbad)')).toBeNull()
    expect(nameProblem('مرحلة التسخين')).toBeNull()
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
    const { agent: outsider, me } = await signUpVerified(t, { email: 'outsider@example.org', password: 'long-enough-3', name: 'Outsider' })
    const ownWs = me.workspaces[0].slug
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

  it('answers only to PUBLIC_URL\'s host and loopback names (DNS rebinding): others get 421', async () => {
    const foreign = await request(t.app).get('/api/health').set('Host', 'rebind.attacker.example:3000')
    expect(foreign.status).toBe(421)
    expect(foreign.body.error.code).toBe('misdirected_request')
    expect(foreign.body.error.message).toMatch(/rebind\.attacker\.example/)
    expect((await request(t.app).get('/api/health').set('Host', 'localhost:3000')).status).toBe(200)
    expect((await request(t.app).get('/api/health').set('Host', '[::1]:3000')).status).toBe(200)
    expect((await request(t.app).get('/api/health').set('Host', '127.0.0.2')).status).toBe(200)
    const own = await makeTestApp('hostcheck', { publicUrl: 'https://pewter.tinmoor.example' }, { seed: false })
    try {
      expect((await request(own.app).get('/api/health').set('Host', 'pewter.tinmoor.example')).status).toBe(200)
      expect((await request(own.app).get('/api/health').set('Host', 'pewter.tinmoor.example.attacker.example')).status).toBe(421)
    } finally {
      await own.close()
    }
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

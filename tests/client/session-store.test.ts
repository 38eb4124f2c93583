/**
 * The session store and the api module against the real server (fresh seeded database): the
 * client's requests satisfy the server's CSRF defence and reply shapes, and the role helpers
 * follow shared/api/auth.ts. fetch is the Node one with a small cookie jar, standing in for the
 * browser (same origin, so the Origin header is the server's own).
 */
import { afterAll, beforeAll, beforeEach, describe, expect, it, vi } from 'vitest'
import type { Server } from 'node:http'
import { createPinia, setActivePinia } from 'pinia'
import { makeTestApp, demo, type TestApp } from '../helpers/app'
import { eq } from 'drizzle-orm'
import { DEMO_PASSWORD } from '../../server/db/seed'
import { memberships, workspaces } from '../../server/db/schema'
import { ApiError, api, setErrorNotifier } from '../../src/api/client'
import { useSessionStore } from '../../src/stores/useSessionStore'
import { capturedMail, mailTo, verificationToken } from '../helpers/signup'

let t: TestApp
let server: Server
let base = ''
let cookies = new Map<string, string>()
const realFetch = globalThis.fetch

beforeAll(async () => {
  t = await makeTestApp('client_session')
  server = await new Promise((resolve) => {
    const s = t.app.listen(0, '127.0.0.1', () => resolve(s))
  })
  const addr = server.address()
  base = `http://127.0.0.1:${typeof addr === 'object' && addr ? addr.port : 0}`
  t.context.config.publicUrl = base
  vi.stubGlobal('fetch', async (path: string, init: RequestInit = {}) => {
    const headers = new Headers(init.headers)
    if (cookies.size) headers.set('Cookie', [...cookies].map(([k, v]) => `${k}=${v}`).join('; '))
    if (init.method && init.method !== 'GET') headers.set('Origin', base)
    const res = await realFetch(base + path, { ...init, headers })
    for (const c of res.headers.getSetCookie()) {
      const [pair] = c.split(';')
      const i = pair!.indexOf('=')
      const name = pair!.slice(0, i)
      const value = pair!.slice(i + 1)
      if (value === '' || /expires=Thu, 01 Jan 1970/i.test(c)) cookies.delete(name)
      else cookies.set(name, value)
    }
    return res
  })
  setErrorNotifier(() => {})
})

afterAll(async () => {
  vi.unstubAllGlobals()
  setErrorNotifier(null)
  await new Promise<void>((resolve) => server.close(() => resolve()))
  await t.close()
})

beforeEach(() => {
  cookies = new Map()
  setActivePinia(createPinia())
})

describe('session store against the server', () => {
  it('starts signed out: /me answers 401 and the store has no user, loading only once', async () => {
    const session = useSessionStore()
    await Promise.all([session.ensureLoaded(), session.ensureLoaded()])
    expect(session.loaded).toBe(true)
    expect(session.isSignedIn).toBe(false)
    expect(session.role).toBeNull()
    expect(session.canWrite).toBe(false)
  })

  it('signs in as each demo role and derives what the role may do', async () => {
    const expected = {
      admin: { canWrite: true, canApprove: true, isAdmin: true },
      modeler: { canWrite: true, canApprove: false, isAdmin: false },
      reviewer: { canWrite: false, canApprove: true, isAdmin: false },
      viewer: { canWrite: false, canApprove: false, isAdmin: false },
    } as const
    for (const role of ['admin', 'modeler', 'reviewer', 'viewer'] as const) {
      cookies = new Map()
      setActivePinia(createPinia())
      const session = useSessionStore()
      await session.signIn({ email: demo[role], password: DEMO_PASSWORD })
      expect(session.user?.email).toBe(demo[role])
      expect(session.currentWorkspace?.slug).toBe(demo.ws)
      expect(session.role).toBe(role)
      expect({ canWrite: session.canWrite, canApprove: session.canApprove, isAdmin: session.isAdmin }).toEqual(expected[role])
      expect(session.homeWorkspace?.slug).toBe(demo.ws)
    }
  })

  it('refuses a wrong password with a 401 ApiError and stays signed out', async () => {
    const session = useSessionStore()
    const err = await session.signIn({ email: demo.modeler, password: 'not-the-password' }).catch((e: unknown) => e)
    expect(err).toBeInstanceOf(ApiError)
    expect((err as ApiError).status).toBe(401)
    expect(session.isSignedIn).toBe(false)
  })

  it('signs up into a workspace of their own, switches between workspaces, and signs out', async () => {
    const session = useSessionStore()
    const after = capturedMail(t.context).length
    const message = await session.signUp({ email: 'tess.trial@tinmoor.example', password: 'long-enough-9', name: 'Tess Trial' })
    expect(message).toMatch(/Check your mail/)
    expect(session.isSignedIn).toBe(false)
    const token = verificationToken(await mailTo(t.context, 'tess.trial@tinmoor.example', /Confirm your e-mail/, after))
    expect(await session.confirmEmail(token, 'long-enough-9')).toEqual({ created: true })
    expect(session.isSignedIn).toBe(true)
    expect(session.user?.emailVerified).toBe(true)
    expect(session.workspaces).toHaveLength(1)
    expect(session.role).toBe('admin')
    const own = session.currentWorkspace!

    // The session survives a fresh store (a page reload).
    setActivePinia(createPinia())
    const reloaded = useSessionStore()
    await reloaded.ensureLoaded()
    expect(reloaded.user?.email).toBe('tess.trial@tinmoor.example')
    expect(reloaded.currentWorkspaceId).toBe(own.id)

    // A second membership (added straight in the database: the team pages come later).
    const [demoWs] = await t.context.db.select().from(workspaces).where(eq(workspaces.slug, demo.ws))
    await t.context.db.insert(memberships).values({ workspaceId: demoWs!.id, userId: reloaded.user!.id, role: 'viewer' })
    await reloaded.refresh()
    expect(reloaded.workspaces.map((w) => w.slug).sort()).toEqual([own.slug, demo.ws].sort())
    expect(reloaded.workspaceBySlug(demo.ws)?.role).toBe('viewer')

    await reloaded.switchWorkspace(demoWs!.id)
    expect(reloaded.currentWorkspace?.slug).toBe(demo.ws)
    expect(reloaded.role).toBe('viewer')
    expect(reloaded.canWrite).toBe(false)
    await reloaded.switchWorkspace(own.id)
    expect(reloaded.role).toBe('admin')
    expect(reloaded.isAdmin).toBe(true)

    // A workspace the user is not a member of is refused and nothing changes.
    cookies = new Map()
    setActivePinia(createPinia())
    const modeler = useSessionStore()
    await modeler.signIn({ email: demo.modeler, password: DEMO_PASSWORD })
    const before = modeler.currentWorkspaceId
    const refused = await modeler.switchWorkspace(own.id).catch((e: unknown) => e)
    expect(refused).toBeInstanceOf(ApiError)
    expect([403, 404]).toContain((refused as ApiError).status)
    expect(modeler.currentWorkspaceId).toBe(before)

    await modeler.signOut()
    expect(modeler.isSignedIn).toBe(false)
    await modeler.refresh()
    expect(modeler.isSignedIn).toBe(false)
  })

  it('passes the sign-up field checks of the server through as field issues', async () => {
    const err = (await api.post('/api/auth/signup', { email: 'not-an-email', password: 'short', name: '' }).catch((e: unknown) => e)) as ApiError
    expect(err.status).toBe(400)
    const fields = err.fieldIssues.map((i) => i.path).sort()
    expect(fields).toEqual(['email', 'name', 'password'])
  })
})

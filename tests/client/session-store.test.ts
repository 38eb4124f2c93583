/**
 * The session store and the api module against the real server (fresh seeded database): the
 * client's requests satisfy the server's CSRF defence and reply shapes, and the role helpers
 * follow shared/api/auth.ts. fetch is the Node one with a small cookie jar, standing in for the
 * browser (same origin, so the Origin header is the server's own).
 */
import { afterAll, beforeAll, beforeEach, describe, expect, it } from 'vitest'
import { createPinia, setActivePinia } from 'pinia'
import { makeTestApp, demo, type TestApp } from '../helpers/app'
import { eq } from 'drizzle-orm'
import { DEMO_PASSWORD } from '../../server/db/seed'
import { memberships, workspaces } from '../../server/db/schema'
import { ApiError, api } from '../../src/api/client'
import { clientFetch, type ClientFetch } from '../helpers/client-fetch'
import { useSessionStore } from '../../src/stores/useSessionStore'
import { capturedMail, mailTo, verificationToken } from '../helpers/signup'

let t: TestApp
let client: ClientFetch

beforeAll(async () => {
  t = await makeTestApp('client_session')
  client = await clientFetch(t)
})

afterAll(async () => {
  await client.close()
  await t.close()
})

beforeEach(() => {
  client.clearCookies()
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
      client.clearCookies()
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
    client.clearCookies()
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

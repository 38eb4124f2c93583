/**
 * Every route registered on the app, against every kind of caller: anonymous, each role's session,
 * another workspace's admin, each role's API token, a removed member's session and a revoked token.
 * The table below says who each route lets in; a route missing from it (a new route) fails the first
 * test, so every route gets a row when it is added.
 *
 * Requests carry no valid body and a made-up id (999999): an allowed caller gets past authorization and
 * meets a 400 (validation), a 404 of the resource (never "Workspace not found.") or a harmless success;
 * a refused caller gets 401, 403 or the 404 that hides a workspace from non-members.
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import request from 'supertest'
import { eq } from 'drizzle-orm'
import { CSRF, demo, makeTestApp, signedIn, type Agent, type TestApp } from '../helpers/app'
import { signUpVerified } from '../helpers/signup'
import { listRoutes } from '../helpers/routes'
import { memberships, users, workspaces } from '../../server/db/schema'

/**
 * Who gets in:
 * - health: everyone, whatever they send: answered before sessions and tokens are read, so it answers
 *   while the database (which holds both) is away
 * - public: everyone (a revoked token is still refused: a bad bearer header is always 401)
 * - public-browser: everyone but API tokens (accepting an invitation)
 * - user: any signed-in account, by session or token
 * - session: a signed-in browser session only (account-level routes)
 * - read / write / approve / administer: members of the workspace whose role (capped by a token's
 *   role) has that capability; non-members get the workspace's 404
 * - member-session: any member, by session only (creating API tokens)
 */
type Access = 'health' | 'public' | 'public-browser' | 'user' | 'session' | 'read' | 'write' | 'approve' | 'administer' | 'member-session'

const MATRIX: Record<string, Access> = {
  'GET /api/health': 'health',
  'POST /api/auth/signup': 'public',
  'GET /api/auth/verify-email/:token': 'public',
  'POST /api/auth/verify-email/:token': 'public',
  'POST /api/auth/verify-email': 'session',
  'POST /api/auth/signin': 'public',
  'POST /api/auth/signout': 'public',
  'GET /api/auth/me': 'user',
  'GET /api/auth/session': 'public',
  'POST /api/auth/workspace': 'user',
  'POST /api/auth/password-reset': 'public',
  'POST /api/auth/password-reset/:token': 'public',
  'GET /api/auth/settings': 'user',
  'PUT /api/auth/settings': 'user',
  'GET /api/invitations/:token': 'public',
  'POST /api/invitations/:token/accept': 'public-browser',
  'POST /api/check': 'user',
  'GET /api/mailbox': 'session',
  'GET /api/mailbox/:mid': 'session',
  'GET /api/workspaces/:ws': 'read',
  'GET /api/workspaces/:ws/settings': 'read',
  'PUT /api/workspaces/:ws/settings': 'administer',
  'GET /api/workspaces/:ws/projects': 'read',
  'POST /api/workspaces/:ws/projects': 'write',
  'GET /api/workspaces/:ws/projects/:pid': 'read',
  'POST /api/workspaces/:ws/projects/example': 'write',
  'DELETE /api/workspaces/:ws/projects/:pid': 'write',
  'DELETE /api/workspaces/:ws/datasets/:did': 'write',
  'DELETE /api/workspaces/:ws/runs/:rid': 'write',
  'POST /api/workspaces/:ws/models/:id/versions/:n/linearize': 'read',
  'GET /api/workspaces/:ws/models/:id/part-updates': 'read',
  'POST /api/workspaces/:ws/models/:id/part-updates': 'write',
  'GET /api/workspaces/:ws/parts': 'read',
  'GET /api/workspaces/:ws/reviews': 'read',
  'POST /api/workspaces/:ws/models/:id/versions/:n/review-request': 'write',
  'POST /api/workspaces/:ws/models/:id/versions/:n/request-changes': 'approve',
  'POST /api/workspaces/:ws/parts/texts': 'read',
  'POST /api/workspaces/:ws/models/:id/versions/:n/export': 'read',
  'PATCH /api/workspaces/:ws/projects/:pid': 'write',
  'GET /api/workspaces/:ws/projects/:pid/datasets': 'read',
  'POST /api/workspaces/:ws/projects/:pid/datasets': 'write',
  'GET /api/workspaces/:ws/projects/:pid/bindings': 'read',
  'POST /api/workspaces/:ws/projects/:pid/bindings/match': 'read',
  'POST /api/workspaces/:ws/projects/:pid/bindings': 'write',
  'PUT /api/workspaces/:ws/projects/:pid/bindings/:bid': 'write',
  'DELETE /api/workspaces/:ws/projects/:pid/bindings/:bid': 'write',
  'POST /api/workspaces/:ws/projects/:pid/runs': 'write',
  'GET /api/workspaces/:ws/projects/:pid/runs': 'read',
  'GET /api/workspaces/:ws/projects/:pid/parameter-sets': 'read',
  'GET /api/workspaces/:ws/datasets': 'read',
  'GET /api/workspaces/:ws/datasets/:did': 'read',
  'PATCH /api/workspaces/:ws/datasets/:did': 'write',
  'GET /api/workspaces/:ws/datasets/:did/data': 'read',
  'GET /api/workspaces/:ws/datasets/:did/original': 'read',
  'POST /api/workspaces/:ws/datasets/:did/condition': 'write',
  'GET /api/workspaces/:ws/runs': 'read',
  'GET /api/workspaces/:ws/runs/:rid': 'read',
  'GET /api/workspaces/:ws/runs/:rid/events': 'read',
  'POST /api/workspaces/:ws/runs/:rid/cancel': 'write',
  'POST /api/workspaces/:ws/runs/:rid/rerun': 'write',
  'GET /api/workspaces/:ws/runs/:rid/export': 'read',
  'GET /api/workspaces/:ws/runs/:rid/landscape': 'read',
  'POST /api/workspaces/:ws/runs/:rid/parameter-sets': 'write',
  'POST /api/workspaces/:ws/runs/:rid/publish': 'write',
  'GET /api/workspaces/:ws/members': 'read',
  'PATCH /api/workspaces/:ws/members/:uid': 'administer',
  'DELETE /api/workspaces/:ws/members/:uid': 'administer',
  'GET /api/workspaces/:ws/invitations': 'administer',
  'POST /api/workspaces/:ws/invitations': 'administer',
  'DELETE /api/workspaces/:ws/invitations/:iid': 'administer',
  'GET /api/workspaces/:ws/audit': 'administer',
  'GET /api/workspaces/:ws/tokens': 'read',
  'POST /api/workspaces/:ws/tokens': 'member-session',
  'DELETE /api/workspaces/:ws/tokens/:tid': 'read',
  'GET /api/workspaces/:ws/models': 'read',
  'POST /api/workspaces/:ws/models': 'write',
  'GET /api/workspaces/:ws/models/:id': 'read',
  'PATCH /api/workspaces/:ws/models/:id': 'write',
  'PUT /api/workspaces/:ws/models/:id/maintainers': 'write',
  'DELETE /api/workspaces/:ws/models/:id': 'administer',
  'GET /api/workspaces/:ws/models/:id/versions/latest': 'read',
  'GET /api/workspaces/:ws/models/:id/versions/:n': 'read',
  'POST /api/workspaces/:ws/models/:id/versions': 'write',
  'POST /api/workspaces/:ws/models/:id/versions/:n/approve': 'approve',
  'PUT /api/workspaces/:ws/models/:id/draft': 'write',
  'DELETE /api/workspaces/:ws/models/:id/draft': 'write',
  'POST /api/workspaces/:ws/models/:id/fork': 'write',
  'GET /api/workspaces/:ws/models/:id/diff': 'read',
}

type Role = 'admin' | 'modeler' | 'reviewer' | 'viewer'
type Caller =
  | { kind: 'anonymous' } | { kind: 'session'; role: Role } | { kind: 'foreign-admin' }
  | { kind: 'token'; role: Role } | { kind: 'removed-member' } | { kind: 'revoked-token' }
type Outcome = 'allowed' | 401 | 403 | 'hidden'

const ROLES: Role[] = ['admin', 'modeler', 'reviewer', 'viewer']
const capability: Record<'read' | 'write' | 'approve' | 'administer', (r: Role) => boolean> = {
  read: () => true,
  write: (r) => r === 'admin' || r === 'modeler',
  approve: (r) => r === 'admin' || r === 'reviewer',
  administer: (r) => r === 'admin',
}

/** What a caller should meet on a route of this access class. */
function expected(access: Access, c: Caller): Outcome {
  if (access === 'health') return 'allowed'
  if (c.kind === 'revoked-token') return 401
  if (access === 'public') return 'allowed'
  if (access === 'public-browser') return c.kind === 'token' ? 401 : 'allowed'
  if (c.kind === 'anonymous') return 401
  if (access === 'user') return 'allowed'
  if (access === 'session') return c.kind === 'token' ? 401 : 'allowed'
  if (c.kind === 'foreign-admin' || c.kind === 'removed-member') return 'hidden'
  if (access === 'member-session') return c.kind === 'token' ? 403 : 'allowed'
  return capability[access](c.role) ? 'allowed' : 403
}

function outcomeOf(r: request.Response): Outcome {
  if (r.status === 401) return 401
  if (r.status === 403) return 403
  if (r.status === 404 && r.body?.error?.message === 'Workspace not found.') return 'hidden'
  return 'allowed'
}

const callerName = (c: Caller) => ('role' in c ? `${c.kind}:${c.role}` : c.kind)

let t: TestApp
const sessions = new Map<string, Agent>()
const bearers = new Map<string, string>()
let callers: Caller[] = []

beforeAll(async () => {
  t = await makeTestApp('route_matrix', { smtpUrl: 'smtp://127.0.0.1:9' })
  for (const role of ROLES) {
    const agent = await signedIn(t.app, demo[role])
    sessions.set(`session:${role}`, agent)
    const tok = await agent.post('/api/workspaces/tinmoor/tokens').set(CSRF).send({ name: `matrix ${role}`, role })
    bearers.set(`token:${role}`, tok.body.token)
  }
  sessions.set('foreign-admin', (await signUpVerified(t, { email: 'foreign.admin@example.org', password: 'long-enough-41', name: 'Foreign Admin' })).agent)

  const { agent: leaver } = await signUpVerified(t, { email: 'leaver@example.org', password: 'long-enough-42', name: 'Leaver' })
  const [ws] = await t.context.db.select().from(workspaces).where(eq(workspaces.slug, 'tinmoor'))
  const [u] = await t.context.db.select().from(users).where(eq(users.email, 'leaver@example.org'))
  await t.context.db.insert(memberships).values({ workspaceId: ws.id, userId: u.id, role: 'modeler' })
  expect((await leaver.get('/api/workspaces/tinmoor/projects')).status).toBe(200)
  const admin = sessions.get('session:admin')!
  expect((await admin.delete(`/api/workspaces/tinmoor/members/${u.id}`).set(CSRF)).status).toBe(204)
  sessions.set('removed-member', leaver)

  const rev = await sessions.get('session:modeler')!.post('/api/workspaces/tinmoor/tokens').set(CSRF).send({ name: 'to revoke', role: 'modeler' })
  expect((await sessions.get('session:modeler')!.delete(`/api/workspaces/tinmoor/tokens/${rev.body.id}`).set(CSRF)).status).toBe(204)
  bearers.set('revoked-token', rev.body.token)

  callers = [
    { kind: 'anonymous' },
    ...ROLES.map((role) => ({ kind: 'session' as const, role })),
    { kind: 'foreign-admin' },
    ...ROLES.map((role) => ({ kind: 'token' as const, role })),
    { kind: 'removed-member' },
    { kind: 'revoked-token' },
  ]
})
afterAll(async () => { await t?.close() })

const concrete = (path: string) => path
  .replace(':ws', 'tinmoor')
  .replace(/:(token)\b/g, 'pwx_no-such-token')
  .replace(/:[a-z]+/gi, '999999')

function send(route: string, c: Caller) {
  const [method, path] = route.split(' ') as [string, string]
  const url = concrete(path)
  const agent = c.kind === 'session' || c.kind === 'foreign-admin' || c.kind === 'removed-member'
    ? sessions.get(callerName(c))! : request(t.app)
  const m = method.toLowerCase() as 'get' | 'post' | 'put' | 'patch' | 'delete'
  let req = agent[m](url).set(CSRF)
  const bearer = c.kind === 'token' ? bearers.get(callerName(c)) : c.kind === 'revoked-token' ? bearers.get('revoked-token') : undefined
  if (bearer) req = req.set('Authorization', `Bearer ${bearer}`)
  if (path.endsWith('/events')) req = req.timeout({ response: 5000 })
  return m === 'get' ? req : req.send({})
}

describe('every route is in the access matrix', () => {
  it('lists each registered route, and no route that is not registered', () => {
    const registered = listRoutes(t.app).filter((r) => r.split(' ')[1]!.startsWith('/api'))
    expect(registered.length).toBeGreaterThan(50)
    const missing = registered.filter((r) => !(r in MATRIX))
    expect(missing, `routes without a row in MATRIX (tests/api/route-matrix.test.ts): add each with who may call it`).toEqual([])
    const stale = Object.keys(MATRIX).filter((r) => !registered.includes(r))
    expect(stale, 'rows of MATRIX for routes that are not registered').toEqual([])
  })
})

describe('the expectations themselves', () => {
  it('tell roles, tokens and outsiders apart', () => {
    expect(expected('administer', { kind: 'session', role: 'modeler' })).toBe(403)
    expect(expected('administer', { kind: 'token', role: 'admin' })).toBe('allowed')
    expect(expected('write', { kind: 'token', role: 'viewer' })).toBe(403)
    expect(expected('read', { kind: 'foreign-admin' })).toBe('hidden')
    expect(expected('read', { kind: 'removed-member' })).toBe('hidden')
    expect(expected('session', { kind: 'token', role: 'admin' })).toBe(401)
    expect(expected('public', { kind: 'revoked-token' })).toBe(401)
    expect(expected('member-session', { kind: 'token', role: 'viewer' })).toBe(403)
  })
})

describe('each caller meets the access its route allows', () => {
  // signing out ends the caller's session: it goes last
  const routes = Object.keys(MATRIX).sort((a, b) => Number(a.endsWith('/signout')) - Number(b.endsWith('/signout')))
  it('matches the matrix for every route and caller', async () => {
    const wrong: string[] = []
    // callers are independent of each other: each walks the routes in order, all at once
    await Promise.all(callers.map(async (c) => {
      for (const route of routes) {
        const r = await send(route, c)
        const got = outcomeOf(r)
        const want = expected(MATRIX[route]!, c)
        if (got !== want) wrong.push(`${route} as ${callerName(c)}: expected ${want}, got ${r.status} ${JSON.stringify(r.body?.error ?? '').slice(0, 140)}`)
      }
    }))
    expect(wrong.sort()).toEqual([])
  }, 300_000)
})

import type { RequestHandler } from 'express'
import { ctx } from '../context'
import { forbidden, notFound, unauthenticated } from '../errors'
import { findMembership } from '../services/workspaces'
import { resolveApiToken } from '../services/api-tokens'
import { can, roleRank, type Role } from '../../shared/api/auth'

/** Sets req.auth from a bearer token (an API token) or else the session cookie. */
export const resolveAuth: RequestHandler = async (req, _res, next) => {
  const header = req.headers.authorization
  if (header?.startsWith('Bearer ')) {
    const auth = await resolveApiToken(ctx(req).db, header.slice(7).trim())
    if (auth) { req.auth = auth; return next() }
    return next(unauthenticated('The API token is invalid or revoked.'))
  }
  if (req.session?.userId) req.auth = { userId: req.session.userId, via: 'session' }
  next()
}

export const requireUser: RequestHandler = (req, _res, next) => {
  if (!req.auth) return next(unauthenticated())
  next()
}

/** A signed-in browser session; an API token is refused (account-level routes are not for tokens). */
export const requireSession: RequestHandler = (req, _res, next) => {
  if (!req.auth) return next(unauthenticated())
  if (req.auth.via !== 'session') return next(unauthenticated('This needs a signed-in browser session; API tokens cannot use it.'))
  next()
}

/**
 * For routes under /api/workspaces/:ws: the caller must be a member (else 404, so foreign workspaces
 * are not even confirmed to exist). A token is bound to one workspace and caps the role.
 */
export const loadWorkspace: RequestHandler = async (req, _res, next) => {
  if (!req.auth) return next(unauthenticated())
  const ws = String(req.params.ws ?? '')
  const m = await findMembership(ctx(req).db, req.auth.userId, ws)
  if (!m) return next(notFound('Workspace'))
  let role: Role = m.role
  if (req.auth.via === 'token') {
    if (req.auth.tokenWorkspaceId !== m.id) return next(notFound('Workspace'))
    if (req.auth.tokenRole && roleRank[req.auth.tokenRole] < roleRank[role]) role = req.auth.tokenRole
  }
  req.workspace = { id: m.id, slug: m.slug, name: m.name, role }
  next()
}

export type Capability = keyof typeof can

/** 403 unless the caller's role in the route's workspace has the capability. */
export const requireCapability = (cap: Capability): RequestHandler => (req, _res, next) => {
  if (!req.workspace) return next(notFound('Workspace'))
  if (!can[cap](req.workspace.role)) return next(forbidden(`Your role (${req.workspace.role}) does not allow this: it needs ${capabilityText[cap]}.`))
  next()
}

const capabilityText: Record<Capability, string> = {
  read: 'read access',
  write: 'the modeler or admin role',
  approve: 'the reviewer or admin role',
  administer: 'the admin role',
}

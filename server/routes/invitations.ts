import { Router } from 'express'
import { ctx } from '../context'
import { requireCapability } from '../middleware/auth'
import { intParam, parse } from '../middleware/validate'
import * as invitations from '../services/invitations'
import * as auth from '../services/auth'
import { audit } from '../services/audit'
import { acceptInvitationBody, inviteBody } from '../../shared/api/team'
import { unauthenticated } from '../errors'

/** /api/workspaces/:ws/invitations — admins invite, list pending, revoke. */
export function workspaceInvitationRoutes() {
  const router = Router({ mergeParams: true })
  router.get('/', requireCapability('administer'), async (req, res) => {
    res.json({ invitations: await invitations.listPendingInvitations(ctx(req).db, req.workspace!.id) })
  })
  router.post('/', requireCapability('administer'), async (req, res) => {
    const body = parse(inviteBody, req.body)
    const r = await invitations.createInvitation(ctx(req), req.workspace!, req.auth!.userId, body)
    await audit(ctx(req).db, { workspaceId: req.workspace!.id, actorId: req.auth!.userId, action: 'member.invited', target: body.email, details: { role: body.role, mailed: r.mailed }, ip: req.ip })
    res.status(201).json(r)
  })
  router.delete('/:iid', requireCapability('administer'), async (req, res) => {
    const iid = intParam(req.params, 'iid')
    const r = await invitations.revokeInvitation(ctx(req).db, req.workspace!.id, iid)
    await audit(ctx(req).db, { workspaceId: req.workspace!.id, actorId: req.auth!.userId, action: 'member.invitation_revoked', target: r.email, ip: req.ip })
    res.status(204).end()
  })
  return router
}

function regenerate(req: Parameters<Parameters<Router['post']>[1]>[0]) {
  return new Promise<void>((resolve, reject) => req.session.regenerate((err) => (err ? reject(err) : resolve())))
}

/** /api/invitations/:token — preview and accept (signed in with the invited address, or creating the account). */
export function invitationTokenRoutes() {
  const router = Router({ mergeParams: true })
  router.get('/:token', async (req, res) => {
    res.json(await invitations.previewInvitation(ctx(req).db, String(req.params.token)))
  })
  router.post('/:token/accept', async (req, res) => {
    const body = parse(acceptInvitationBody, req.body ?? {})
    const { db } = ctx(req)
    if (req.auth?.via === 'token') throw unauthenticated('Accept an invitation from a signed-in browser session, not with an API token.')
    const r = await invitations.acceptInvitation(db, String(req.params.token), req.auth ? { userId: req.auth.userId } : body)
    if (r.created) {
      await regenerate(req)
      req.session.userId = r.userId
      await audit(db, { actorId: r.userId, action: 'auth.signup', target: r.email, ip: req.ip })
    }
    await audit(db, { workspaceId: r.workspace.id, actorId: r.userId, action: 'member.joined', target: r.email, details: { role: r.role }, ip: req.ip })
    res.json({ workspace: r.workspace, role: r.role, me: await auth.me(db, r.userId) })
  })
  return router
}

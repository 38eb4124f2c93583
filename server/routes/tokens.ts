import { Router } from 'express'
import { ctx } from '../context'
import { requireCapability } from '../middleware/auth'
import { intParam, parse } from '../middleware/validate'
import * as tokens from '../services/api-tokens'
import { audit } from '../services/audit'
import { createTokenBody } from '../../shared/api/team'
import { forbidden } from '../errors'
import { can } from '../../shared/api/auth'

/** /api/workspaces/:ws/tokens — any member manages their own tokens (signed in, not with a token); admins see and revoke all. */
export function tokenRoutes() {
  const router = Router({ mergeParams: true })
  router.get('/', requireCapability('read'), async (req, res) => {
    const admin = can.administer(req.workspace!.role)
    res.json({ tokens: await tokens.listTokens(ctx(req).db, req.workspace!.id, req.auth!.userId, admin) })
  })
  router.post('/', requireCapability('read'), async (req, res) => {
    if (req.auth!.via === 'token') throw forbidden('An API token cannot create tokens: sign in to create one.')
    const body = parse(createTokenBody, req.body)
    const created = await tokens.createToken(ctx(req).db, req.workspace!, req.auth!.userId, body)
    await audit(ctx(req).db, { workspaceId: req.workspace!.id, actorId: req.auth!.userId, action: 'token.created', target: `${created.name} (${created.prefix}…)`, details: { tokenId: created.id, role: created.role }, ip: req.ip })
    res.status(201).json(created)
  })
  router.delete('/:tid', requireCapability('read'), async (req, res) => {
    const tid = intParam(req.params, 'tid')
    const admin = can.administer(req.workspace!.role)
    const r = await tokens.revokeToken(ctx(req).db, req.workspace!.id, tid, req.auth!.userId, admin)
    await audit(ctx(req).db, { workspaceId: req.workspace!.id, actorId: req.auth!.userId, action: 'token.revoked', target: r.name, details: { tokenId: r.id }, ip: req.ip })
    res.status(204).end()
  })
  return router
}

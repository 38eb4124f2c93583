import { Router } from 'express'
import { ctx } from '../context'
import { requireCapability } from '../middleware/auth'
import { intParam, parse } from '../middleware/validate'
import * as members from '../services/members'
import { audit } from '../services/audit'
import { changeRoleBody } from '../../shared/api/team'

/** /api/workspaces/:ws/members — everyone may list; admins change roles and remove. */
export function memberRoutes() {
  const router = Router({ mergeParams: true })
  router.get('/', requireCapability('read'), async (req, res) => {
    res.json({ members: await members.listMembers(ctx(req).db, req.workspace!.id) })
  })
  router.patch('/:uid', requireCapability('administer'), async (req, res) => {
    const uid = intParam(req.params, 'uid')
    const { role } = parse(changeRoleBody, req.body)
    const { db } = ctx(req)
    const change = await members.changeRole(db, req.workspace!.id, uid, role)
    if (change.from !== change.to) {
      await audit(db, { workspaceId: req.workspace!.id, actorId: req.auth!.userId, action: 'member.role_changed', target: `user:${uid}`, details: change, ip: req.ip })
    }
    res.json({ members: await members.listMembers(db, req.workspace!.id) })
  })
  router.delete('/:uid', requireCapability('administer'), async (req, res) => {
    const uid = intParam(req.params, 'uid')
    const { db } = ctx(req)
    const removed = await members.removeMember(db, req.workspace!.id, uid)
    await audit(db, { workspaceId: req.workspace!.id, actorId: req.auth!.userId, action: 'member.removed', target: removed.email, details: { userId: uid, role: removed.role }, ip: req.ip })
    res.status(204).end()
  })
  return router
}

import { Router } from 'express'
import { ctx } from '../context'
import { requireCapability } from '../middleware/auth'
import { parse } from '../middleware/validate'
import { audit } from '../services/audit'
import { getWorkspaceSettings, updateWorkspaceSettings } from '../services/workspace-settings'
import { workspaceSettingsBody } from '../../shared/api/team'

/** GET /api/workspaces/:ws — the workspace and the caller's role in it; /settings — its rules (admins change them). */
export function workspaceRoutes() {
  const router = Router({ mergeParams: true })
  router.get('/', (req, res) => { res.json(req.workspace) })
  router.get('/settings', requireCapability('read'), async (req, res) => {
    res.json(await getWorkspaceSettings(ctx(req).db, req.workspace!.id))
  })
  router.put('/settings', requireCapability('administer'), async (req, res) => {
    const body = parse(workspaceSettingsBody, req.body)
    const { before, after } = await updateWorkspaceSettings(ctx(req).db, req.workspace!.id, body)
    await audit(ctx(req).db, { workspaceId: req.workspace!.id, actorId: req.auth!.userId, action: 'workspace.settings_changed', details: { before, after }, ip: req.ip })
    res.json(after)
  })
  return router
}

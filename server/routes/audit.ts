import { Router } from 'express'
import { ctx } from '../context'
import { requireCapability } from '../middleware/auth'
import { parse } from '../middleware/validate'
import { listAudit } from '../services/audit'
import { auditQuery } from '../../shared/api/team'

/** /api/workspaces/:ws/audit?limit=&before=&action= — admins only; `before` pages by entry id. */
export function auditRoutes() {
  const router = Router({ mergeParams: true })
  router.get('/', requireCapability('administer'), async (req, res) => {
    const q = parse(auditQuery, req.query, 'query')
    const entries = await listAudit(ctx(req).db, req.workspace!.id, q)
    res.json({ entries, next: entries.length === q.limit ? entries[entries.length - 1].id : null })
  })
  return router
}

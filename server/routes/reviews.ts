/** /api/workspaces/:ws/reviews — the versions awaiting review (thin: authorize, call the service). */
import { Router, type Request } from 'express'
import { ctx } from '../context'
import { requireCapability } from '../middleware/auth'
import { reviewQueue } from '../services/reviews'

const actor = (req: Request) => ({ userId: req.auth!.userId, workspaceId: req.workspace!.id, role: req.workspace!.role, ip: req.ip })

export function reviewRoutes() {
  const router = Router({ mergeParams: true })
  router.get('/', requireCapability('read'), async (req, res) => {
    res.json(await reviewQueue(ctx(req).db, actor(req)))
  })
  return router
}

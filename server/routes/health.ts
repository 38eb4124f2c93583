/**
 * GET /api/health: 200 `{ ok: true, db: true }` when the database answers, else 503 with the reason
 * (`{ ok: false, db: false, reason }`). Mounted before the session middleware, so it answers without
 * touching the session store while the database is away; no restart is needed when it comes back.
 */
import { Router } from 'express'
import { ctx } from '../context'
import { databaseHealth } from '../services/health'

export function healthRoutes() {
  const router = Router()
  router.get('/', async (req, res) => {
    const h = await databaseHealth(ctx(req).database.pool)
    res.status(h.ok ? 200 : 503).json(h.ok ? { ok: true, db: true } : { ok: false, db: false, reason: h.reason })
  })
  return router
}

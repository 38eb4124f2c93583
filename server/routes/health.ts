import { Router } from 'express'
import { sql } from 'drizzle-orm'
import { ctx } from '../context'

export function healthRoutes() {
  const router = Router()
  router.get('/', async (req, res) => {
    let db = false
    try {
      await ctx(req).db.execute(sql`select 1`)
      db = true
    } catch { db = false }
    res.status(db ? 200 : 503).json({ ok: db, db })
  })
  return router
}

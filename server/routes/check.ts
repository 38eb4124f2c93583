/** POST /api/check {text} — a sheet's diagnostics and summary; nothing is saved. Needs a signed-in user. */
import { Router } from 'express'
import { requireUser } from '../middleware/auth'
import { parse } from '../middleware/validate'
import { checkSheet } from '../services/sheet-check'
import { checkBody } from '../../shared/api/models'

export function checkRoutes() {
  const router = Router()
  router.post('/', requireUser, (req, res) => {
    res.json(checkSheet(parse(checkBody, req.body).text))
  })
  return router
}

import { Router } from 'express'
import { ctx } from '../context'
import { requireSession } from '../middleware/auth'
import { intParam } from '../middleware/validate'
import { ownMailbox, readOwnMail } from '../services/mailbox'

/**
 * /api/mailbox — the signed-in user's own captured local mail (development and demo installs; with a
 * real relay it stays empty). A browser session only: API tokens are bound to a workspace, mail is not.
 */
export function mailboxRoutes() {
  const router = Router()
  router.get('/', requireSession, async (req, res) => {
    res.json(await ownMailbox(ctx(req), req.auth!.userId))
  })
  router.get('/:mid', requireSession, async (req, res) => {
    res.json(await readOwnMail(ctx(req).db, req.auth!.userId, intParam(req.params, 'mid')))
  })
  return router
}

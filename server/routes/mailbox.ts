import { Router } from 'express'
import { ctx } from '../context'
import { requireSession } from '../middleware/auth'
import { intParam } from '../middleware/validate'
import { listOwnMail, readOwnMail } from '../services/mailbox'

/**
 * /api/mailbox — the signed-in user's own captured local mail (development and demo installs; with a
 * real relay it stays empty). A browser session only: API tokens are bound to a workspace, mail is not.
 */
export function mailboxRoutes() {
  const router = Router()
  router.get('/', requireSession, async (req, res) => {
    const { config, services } = ctx(req)
    res.json({ messages: await listOwnMail(ctx(req).db, req.auth!.userId), capturing: !config.smtpUrl || services.fakeSmtp === true || process.env.PEWTER_FAKE_SMTP === '1' })
  })
  router.get('/:mid', requireSession, async (req, res) => {
    res.json(await readOwnMail(ctx(req).db, req.auth!.userId, intParam(req.params, 'mid')))
  })
  return router
}

import { Router } from 'express'
import { desc, eq } from 'drizzle-orm'
import { ctx } from '../context'
import { requireCapability } from '../middleware/auth'
import { intParam } from '../middleware/validate'
import { mailbox } from '../db/schema'
import { notFound } from '../errors'
import type { MailDto } from '../../shared/api/team'

const dto = (r: typeof mailbox.$inferSelect): MailDto => ({ ...r, receivedAt: r.receivedAt.toISOString() })

/**
 * /api/workspaces/:ws/mailbox — admins read what the local fake SMTP server captured (development and
 * demo only; with a real relay it stays empty). The capture is server-wide, like the fake server.
 */
export function mailboxRoutes() {
  const router = Router({ mergeParams: true })
  router.get('/', requireCapability('administer'), async (req, res) => {
    const rows = await ctx(req).db.select().from(mailbox).orderBy(desc(mailbox.id)).limit(200)
    res.json({ messages: rows.map(dto), capturing: !ctx(req).config.smtpUrl || ctx(req).services.fakeSmtp === true || process.env.PEWTER_FAKE_SMTP === '1' })
  })
  router.get('/:mid', requireCapability('administer'), async (req, res) => {
    const [row] = await ctx(req).db.select().from(mailbox).where(eq(mailbox.id, intParam(req.params, 'mid')))
    if (!row) throw notFound('Message')
    res.json(dto(row))
  })
  return router
}

import { Router } from 'express'
import { authAttemptLimiter } from '../middleware/rate-limit'
import { ctx } from '../context'
import { requireUser } from '../middleware/auth'
import { parse } from '../middleware/validate'
import { requestPasswordReset, resetPassword } from '../services/password-reset'
import { audit } from '../services/audit'
import { assertUncommonPassword } from '../auth/passwords'
import { getSettings, updateSettings } from '../services/account-settings'
import { passwordResetBody, passwordResetRequestBody, settingsBody } from '../../shared/api/team'

/** /api/auth/password-reset… and /api/auth/settings (mounted beside the sign-in routes). */
export function accountRoutes(limitPerWindow: number) {
  const router = Router()
  const limiter = authAttemptLimiter(limitPerWindow)
  router.post('/password-reset', limiter, async (req, res) => {
    const { email } = parse(passwordResetRequestBody, req.body)
    const context = ctx(req)
    // the reply never waits for the lookup or the mail, so neither its content nor its timing tells whether the address has an account
    void requestPasswordReset(context, email)
      .then(async (userId) => { if (userId) await audit(context.db, { actorId: userId, action: 'auth.password_reset_requested', target: email, ip: req.ip }) })
      .catch((err) => console.error(`[pewter] password reset for ${email}: ${err instanceof Error ? err.message : err}`))
    res.status(202).json({ message: 'If an account with this e-mail exists, a message with a reset link is on its way.' })
  })
  router.post('/password-reset/:token', limiter, async (req, res) => {
    const { password } = parse(passwordResetBody, req.body)
    assertUncommonPassword(password)
    const userId = await resetPassword(ctx(req), String(req.params.token), password)
    await audit(ctx(req).db, { actorId: userId, action: 'auth.password_reset', ip: req.ip })
    res.json({ message: 'Your password has been changed and your API tokens revoked. Sign in with the new password.' })
  })
  router.get('/settings', requireUser, async (req, res) => {
    res.json(await getSettings(ctx(req).db, req.auth!.userId))
  })
  router.put('/settings', requireUser, async (req, res) => {
    res.json(await updateSettings(ctx(req).db, req.auth!.userId, parse(settingsBody, req.body)))
  })
  return router
}

import { Router } from 'express'
import { authAttemptLimiter } from '../middleware/rate-limit'
import { ctx } from '../context'
import { parse } from '../middleware/validate'
import { requireSession, requireUser } from '../middleware/auth'
import * as auth from '../services/auth'
import * as verification from '../services/email-verification'
import { assertUncommonPassword } from '../auth/passwords'
import { loadTemplates } from '../services/templates'
import { audit } from '../services/audit'
import { SIGNUP_MESSAGE, signinBody, signupBody, switchWorkspaceBody, verifyEmailBody, type SessionReply } from '../../shared/api/auth'

function regenerate(req: Parameters<Parameters<Router['post']>[1]>[0]) {
  return new Promise<void>((resolve, reject) => req.session.regenerate((err) => (err ? reject(err) : resolve())))
}

export function authRoutes(limitPerWindow: number) {
  const router = Router()
  const limiter = authAttemptLimiter(limitPerWindow)

  router.post('/signup', limiter, async (req, res) => {
    const body = parse(signupBody, req.body)
    assertUncommonPassword(body.password)
    const context = ctx(req)
    // the reply never waits for the lookup or the mail: its content and timing are the same for a new and a known address
    void verification.requestSignup(context, body)
      .then(({ existingUserId }) => audit(context.db, { actorId: existingUserId, action: existingUserId ? 'auth.signup_existing' : 'auth.signup_requested', target: body.email, ip: req.ip }))
      .catch((err) => console.error(`[pewter] sign-up for ${body.email}: ${err instanceof Error ? err.message : err}`))
    res.status(202).json({ message: SIGNUP_MESSAGE })
  })

  router.get('/verify-email/:token', limiter, async (req, res) => {
    res.json(await verification.previewVerification(ctx(req).db, String(req.params.token)))
  })

  router.post('/verify-email/:token', limiter, async (req, res) => {
    const { password } = parse(verifyEmailBody, req.body ?? {})
    const { db } = ctx(req)
    const r = await verification.confirmEmail(db, String(req.params.token), password)
    if (r.created) {
      await regenerate(req)
      req.session.userId = r.userId
      await audit(db, { actorId: r.userId, action: 'auth.signup', target: r.email, ip: req.ip })
      // the new workspace's library starts with the shipped templates
      for (const w of (await auth.me(db, r.userId)).workspaces) await loadTemplates(db, ctx(req).database.pool, { workspaceSlug: w.slug })
    } else {
      await audit(db, { actorId: r.userId, action: 'auth.email_verified', target: r.email, ip: req.ip })
    }
    res.json({ created: r.created, me: req.session.userId ? await auth.me(db, req.session.userId) : null })
  })

  /** A signed-in account whose address is not confirmed asks for a new link. */
  router.post('/verify-email', limiter, requireSession, async (req, res) => {
    const mailed = await verification.requestVerificationLink(ctx(req), req.auth!.userId)
    res.status(202).json({ message: mailed ? 'A message with a confirmation link is on its way.' : 'The message could not be sent; try again later.' })
  })

  router.post('/signin', limiter, async (req, res) => {
    const body = parse(signinBody, req.body)
    const { db } = ctx(req)
    const { user, attemptedUserId } = await auth.signin(db, body)
    if (!user) {
      await audit(db, { actorId: attemptedUserId, action: 'auth.signin_failed', target: body.email, ip: req.ip })
      throw auth.invalidCredentials()
    }
    await regenerate(req)
    req.session.userId = user.id
    await audit(db, { actorId: user.id, workspaceId: user.currentWorkspaceId, action: 'auth.signin', target: user.email, ip: req.ip })
    res.json(await auth.me(db, user.id))
  })

  router.post('/signout', (req, res, next) => {
    req.session.destroy((err) => {
      if (err) return next(err)
      res.clearCookie('pewter.sid')
      res.status(204).end()
    })
  })

  router.get('/me', requireUser, async (req, res) => {
    res.json(await auth.me(ctx(req).db, req.auth!.userId))
  })

  // The client's first question on every page load: answers 200 whether or not anyone is signed in,
  // so signed-out pages log no failed request.
  router.get('/session', async (req, res) => {
    const reply: SessionReply = { session: req.auth?.userId ? await auth.me(ctx(req).db, req.auth.userId) : null }
    res.json(reply)
  })

  router.post('/workspace', requireUser, async (req, res) => {
    const { workspaceId } = parse(switchWorkspaceBody, req.body)
    await auth.switchWorkspace(ctx(req).db, req.auth!.userId, workspaceId)
    res.json(await auth.me(ctx(req).db, req.auth!.userId))
  })

  return router
}

import { Router } from 'express'
import { authAttemptLimiter } from '../middleware/rate-limit'
import { ctx } from '../context'
import { parse } from '../middleware/validate'
import { requireUser } from '../middleware/auth'
import * as auth from '../services/auth'
import { loadTemplates } from '../services/templates'
import { audit } from '../services/audit'
import { signinBody, signupBody, switchWorkspaceBody, type SessionReply } from '../../shared/api/auth'

function regenerate(req: Parameters<Parameters<Router['post']>[1]>[0]) {
  return new Promise<void>((resolve, reject) => req.session.regenerate((err) => (err ? reject(err) : resolve())))
}

export function authRoutes(limitPerWindow: number) {
  const router = Router()
  const limiter = authAttemptLimiter(limitPerWindow)

  router.post('/signup', limiter, async (req, res) => {
    const body = parse(signupBody, req.body)
    const user = await auth.signup(ctx(req).db, body)
    await regenerate(req)
    req.session.userId = user.id
    await audit(ctx(req).db, { actorId: user.id, action: 'auth.signup', target: user.email, ip: req.ip })
    const me = await auth.me(ctx(req).db, user.id)
    // the new workspace's library starts with the shipped templates
    for (const w of me.workspaces) await loadTemplates(ctx(req).db, ctx(req).database.pool, { workspaceSlug: w.slug })
    res.status(201).json(me)
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

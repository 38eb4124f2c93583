import { Router } from 'express'

/** GET /api/workspaces/:ws — the workspace and the caller's role in it. */
export function workspaceRoutes() {
  const router = Router({ mergeParams: true })
  router.get('/', (req, res) => { res.json(req.workspace) })
  return router
}

/**
 * Mounts every API router. Workspace-scoped routers go under /workspaces/:ws (membership checked
 * by loadWorkspace: a foreign workspace answers 404).
 */
import { Router } from 'express'
import type { AppContext } from '../context'
import { loadWorkspace } from '../middleware/auth'
import { authRoutes } from './auth'
import { healthRoutes } from './health'
import { workspaceRoutes } from './workspaces'
import { projectRoutes } from './projects'

export function apiRouter(context: AppContext) {
  const api = Router()
  api.use('/health', healthRoutes())
  api.use('/auth', authRoutes(context.config.rateLimitAuth))

  const ws = Router({ mergeParams: true })
  ws.use(loadWorkspace)
  ws.use('/', workspaceRoutes())
  ws.use('/projects', projectRoutes())
  api.use('/workspaces/:ws', ws)
  return api
}

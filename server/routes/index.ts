/**
 * Mounts every API router. Workspace-scoped routers go under /workspaces/:ws (membership checked
 * by loadWorkspace: a foreign workspace answers 404). /api/health is mounted in app.ts, before the
 * session middleware.
 */
import { Router } from 'express'
import type { AppContext } from '../context'
import { loadWorkspace } from '../middleware/auth'
import { authRoutes } from './auth'
import { workspaceRoutes } from './workspaces'
import { projectRoutes } from './projects'
import { datasetRoutes, projectDatasetRoutes } from './datasets'
import { projectRunRoutes, runRoutes } from './runs'
import { accountRoutes } from './account'
import { invitationTokenRoutes, workspaceInvitationRoutes } from './invitations'
import { memberRoutes } from './members'
import { auditRoutes } from './audit'
import { tokenRoutes } from './tokens'
import { mailboxRoutes } from './mailbox'
import { modelRoutes } from './models'
import { checkRoutes } from './check'
import { partRoutes } from './parts'
import { reviewRoutes } from './reviews'

export function apiRouter(context: AppContext) {
  const api = Router()
  api.use('/auth', authRoutes(context.config.rateLimitAuth))
  api.use('/auth', accountRoutes(context.config.rateLimitAuth))
  api.use('/invitations', invitationTokenRoutes())
  api.use('/check', checkRoutes())
  api.use('/mailbox', mailboxRoutes())

  const ws = Router({ mergeParams: true })
  ws.use(loadWorkspace)
  ws.use('/', workspaceRoutes())
  ws.use('/projects', projectRoutes())
  ws.use('/projects/:pid', projectDatasetRoutes(), projectRunRoutes())
  ws.use('/datasets', datasetRoutes())
  ws.use('/runs', runRoutes())
  ws.use('/members', memberRoutes())
  ws.use('/invitations', workspaceInvitationRoutes())
  ws.use('/audit', auditRoutes())
  ws.use('/tokens', tokenRoutes())
  ws.use('/models', modelRoutes())
  ws.use('/parts', partRoutes())
  ws.use('/reviews', reviewRoutes())
  api.use('/workspaces/:ws', ws)
  return api
}

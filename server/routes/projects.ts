import { Router } from 'express'
import { ctx } from '../context'
import { requireCapability } from '../middleware/auth'
import { intParam, parse } from '../middleware/validate'
import * as projects from '../services/projects'
import { createProjectBody, updateProjectBody, type ExampleProjectReply } from '../../shared/api/projects'
import { startExampleProject } from '../services/demo-project'
import type { JobRunner } from '../jobs/types'
import { deleteProject } from '../services/deletes'

export function projectRoutes() {
  const router = Router({ mergeParams: true })
  router.get('/', requireCapability('read'), async (req, res) => {
    res.json({ projects: await projects.listProjects(ctx(req).db, req.workspace!.id) })
  })
  router.post('/', requireCapability('write'), async (req, res) => {
    const body = parse(createProjectBody, req.body)
    res.status(201).json(await projects.createProject(ctx(req).db, req.workspace!.id, req.auth!.userId, body))
  })
  // "try it on example data": the buffer-vessel template, two invented traces and a first fit
  router.post('/example', requireCapability('write'), async (req, res) => {
    const reply: ExampleProjectReply = await startExampleProject(ctx(req).db, ctx(req).services.jobs as JobRunner | undefined, req.workspace!.id, req.auth!.userId)
    res.status(201).json(reply)
  })
  router.get('/:pid', requireCapability('read'), async (req, res) => {
    const pid = intParam(req.params, 'pid')
    res.json(await projects.getProject(ctx(req).db, req.workspace!.id, pid))
  })
  router.patch('/:pid', requireCapability('write'), async (req, res) => {
    const pid = intParam(req.params, 'pid')
    res.json(await projects.updateProject(ctx(req).db, req.workspace!.id, pid, parse(updateProjectBody, req.body)))
  })
  router.delete('/:pid', requireCapability('write'), async (req, res) => {
    await deleteProject(ctx(req).db, req.workspace!.id, intParam(req.params, 'pid'))
    res.status(204).end()
  })
  return router
}

/**
 * /api/workspaces/:ws/models — the shared model library (thin: parse, authorize, call the service).
 */
import { Router, type Request } from 'express'
import { ctx } from '../context'
import { requireCapability } from '../middleware/auth'
import { intParam, parse } from '../middleware/validate'
import * as library from '../services/models'
import { notifyEnvOf, notifyForked } from '../services/notifications'
import { exportVersion, linearizeVersion } from '../services/handover'
import { exportBody, handoverBody } from '../../shared/api/handover'
import {
  createModelBody, diffQuery, forkBody, listModelsQuery, publishBody, saveDraftBody, setMaintainersBody, updateModelBody, type DeleteModelReply,
} from '../../shared/api/models'

const actor = (req: Request): library.Actor => ({ userId: req.auth!.userId, workspaceId: req.workspace!.id, role: req.workspace!.role, ip: req.ip })

export function modelRoutes() {
  const router = Router({ mergeParams: true })

  router.get('/', requireCapability('read'), async (req, res) => {
    res.json(await library.listModels(ctx(req).db, actor(req), parse(listModelsQuery, req.query, 'query')))
  })
  router.post('/', requireCapability('write'), async (req, res) => {
    res.status(201).json(await library.createModel(ctx(req).db, actor(req), parse(createModelBody, req.body)))
  })
  router.get('/:id', requireCapability('read'), async (req, res) => {
    res.json(await library.getModel(ctx(req).db, actor(req), intParam(req.params, 'id')))
  })
  router.patch('/:id', requireCapability('write'), async (req, res) => {
    const id = intParam(req.params, 'id')
    await library.assertNotTemplate(ctx(req).db, actor(req), id)
    res.json(await library.updateModel(ctx(req).db, actor(req), id, parse(updateModelBody, req.body)))
  })
  router.put('/:id/maintainers', requireCapability('write'), async (req, res) => {
    const id = intParam(req.params, 'id')
    res.json(await library.setMaintainers(ctx(req).db, actor(req), id, parse(setMaintainersBody, req.body)))
  })
  // hand-over: linear analysis and exports of a version (POST: bodies carry options; nothing is stored)
  router.post('/:id/versions/:n/linearize', requireCapability('read'), async (req, res) => {
    const body = parse(handoverBody, req.body)
    res.json(await linearizeVersion(ctx(req).db, actor(req), intParam(req.params, 'id'), intParam(req.params, 'n'), body))
  })
  router.post('/:id/versions/:n/export', requireCapability('read'), async (req, res) => {
    const body = parse(exportBody, req.body)
    const file = await exportVersion(ctx(req).db, actor(req), intParam(req.params, 'id'), intParam(req.params, 'n'), body)
    res.setHeader('Content-Type', file.contentType)
    res.setHeader('Content-Disposition', `attachment; filename="${file.fileName}"`)
    res.send(typeof file.data === 'string' ? file.data : Buffer.from(file.data))
  })
  router.delete('/:id', requireCapability('administer'), async (req, res) => {
    const id = intParam(req.params, 'id')
    await library.deleteModel(ctx(req).db, actor(req), id)
    const reply: DeleteModelReply = { deleted: true, id }
    res.json(reply)
  })

  router.get('/:id/versions/latest', requireCapability('read'), async (req, res) => {
    res.json(await library.getVersion(ctx(req).db, actor(req), intParam(req.params, 'id'), 'latest'))
  })
  router.get('/:id/versions/:n', requireCapability('read'), async (req, res) => {
    res.json(await library.getVersion(ctx(req).db, actor(req), intParam(req.params, 'id'), intParam(req.params, 'n')))
  })
  router.post('/:id/versions', requireCapability('write'), async (req, res) => {
    const id = intParam(req.params, 'id')
    await library.assertNotTemplate(ctx(req).db, actor(req), id)
    res.status(201).json(await library.publishVersion(ctx(req).db, actor(req), id, parse(publishBody, req.body)))
  })
  router.post('/:id/versions/:n/approve', requireCapability('approve'), async (req, res) => {
    const id = intParam(req.params, 'id')
    res.json(await library.approveVersion(ctx(req).db, actor(req), id, intParam(req.params, 'n')))
  })

  router.put('/:id/draft', requireCapability('write'), async (req, res) => {
    const id = intParam(req.params, 'id')
    await library.assertNotTemplate(ctx(req).db, actor(req), id)
    res.json(await library.saveDraft(ctx(req).db, actor(req), id, parse(saveDraftBody, req.body)))
  })
  router.delete('/:id/draft', requireCapability('write'), async (req, res) => {
    await library.discardDraft(ctx(req).db, actor(req), intParam(req.params, 'id'))
    res.status(204).end()
  })

  router.post('/:id/fork', requireCapability('write'), async (req, res) => {
    const id = intParam(req.params, 'id')
    const fork = await library.forkModel(ctx(req).db, actor(req), id, parse(forkBody, req.body))
    // "your model was forked" to the origin's owner and maintainers; a mail failure never undoes the fork
    await notifyForked(notifyEnvOf(ctx(req)), { sourceModelId: id, forkModelId: fork.id, forkedBy: req.auth!.userId })
      .catch((err) => console.error(`[pewter] fork notification failed: ${err instanceof Error ? err.message : err}`))
    res.status(201).json(fork)
  })
  router.get('/:id/diff', requireCapability('read'), async (req, res) => {
    const id = intParam(req.params, 'id')
    res.json(await library.diffVersions(ctx(req).db, actor(req), id, parse(diffQuery, req.query, 'query')))
  })
  return router
}

/**
 * /api/workspaces/:ws/models — the shared model library (thin: parse, authorize, call the service).
 */
import { Router, type Request } from 'express'
import { ctx } from '../context'
import { requireCapability } from '../middleware/auth'
import { intParam, parse } from '../middleware/validate'
import * as library from '../services/models'
import { notifyChangesRequested, notifyEnvOf, notifyForked, notifyReviewRequested } from '../services/notifications'
import { requestChanges, requestReview } from '../services/reviews'
import { exportVersion, linearizeVersion } from '../services/handover'
import { acceptPartUpdates, partUpdates } from '../services/part-updates'
import { acceptPartUpdatesBody } from '../../shared/api/parts'
import { listModelParameterSets } from '../services/runs'
import { exportBody, handoverBody } from '../../shared/api/handover'
import {
  createModelBody, diffQuery, forkBody, listModelsQuery, publishBody, requestChangesBody, reviewCommentBody, saveDraftBody, setMaintainersBody, updateModelBody, type DeleteModelReply,
} from '../../shared/api/models'

/** A mail failure never undoes the step it reports. */
const mailFailed = (what: string) => (err: unknown) => console.error(`[pewter] ${what} notification failed: ${err instanceof Error ? err.message : err}`)

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
  router.get('/:id/parameter-sets', requireCapability('read'), async (req, res) => {
    res.json({ parameterSets: await listModelParameterSets(ctx(req).db, req.workspace!.id, intParam(req.params, 'id')) })
  })
  // hand-over: linear analysis and exports of a version (POST: bodies carry options; nothing is stored)
  router.post('/:id/versions/:n/linearize', requireCapability('read'), async (req, res) => {
    const body = parse(handoverBody, req.body)
    res.json(await linearizeVersion(ctx(req), actor(req), intParam(req.params, 'id'), intParam(req.params, 'n'), body))
  })
  router.post('/:id/versions/:n/export', requireCapability('read'), async (req, res) => {
    const body = parse(exportBody, req.body)
    const file = await exportVersion(ctx(req), actor(req), intParam(req.params, 'id'), intParam(req.params, 'n'), body)
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

  router.delete('/:id/versions/:n', requireCapability('administer'), async (req, res) => {
    const id = intParam(req.params, 'id')
    const n = intParam(req.params, 'n')
    await library.deleteVersion(ctx(req).db, actor(req), id, n)
    res.json({ deleted: true, id, version: n })
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
  // review: ask (maintainers; reviewers are mailed), approve with a comment, or request changes (the author is mailed)
  router.post('/:id/versions/:n/approve', requireCapability('approve'), async (req, res) => {
    const id = intParam(req.params, 'id')
    const { comment } = parse(reviewCommentBody, req.body ?? {})
    res.json(await library.approveVersion(ctx(req).db, actor(req), id, intParam(req.params, 'n'), comment))
  })
  router.post('/:id/versions/:n/review-request', requireCapability('write'), async (req, res) => {
    const id = intParam(req.params, 'id')
    const n = intParam(req.params, 'n')
    const { comment } = parse(reviewCommentBody, req.body ?? {})
    const v = await requestReview(ctx(req).db, actor(req), id, n, comment)
    await notifyReviewRequested(notifyEnvOf(ctx(req)), { modelId: id, version: n, requestedBy: req.auth!.userId, comment }).catch(mailFailed('review request'))
    res.json(v)
  })
  router.post('/:id/versions/:n/request-changes', requireCapability('approve'), async (req, res) => {
    const id = intParam(req.params, 'id')
    const n = intParam(req.params, 'n')
    const { comment } = parse(requestChangesBody, req.body)
    const v = await requestChanges(ctx(req).db, actor(req), id, n, comment)
    await notifyChangesRequested(notifyEnvOf(ctx(req)), { modelId: id, version: n, by: req.auth!.userId, comment }).catch(mailFailed('change request'))
    res.json(v)
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
    await notifyForked(notifyEnvOf(ctx(req)), { sourceModelId: id, forkModelId: fork.id, forkedBy: req.auth!.userId }).catch(mailFailed('fork'))
    res.status(201).json(fork)
  })
  // parts with newer approved versions: the offer (flattened diff) and accepting it into the caller's draft
  router.get('/:id/part-updates', requireCapability('read'), async (req, res) => {
    res.json(await partUpdates(ctx(req).db, actor(req), intParam(req.params, 'id')))
  })
  router.post('/:id/part-updates', requireCapability('write'), async (req, res) => {
    const id = intParam(req.params, 'id')
    await library.assertNotTemplate(ctx(req).db, actor(req), id)
    res.json(await acceptPartUpdates(ctx(req).db, actor(req), id, parse(acceptPartUpdatesBody, req.body)))
  })
  router.get('/:id/diff', requireCapability('read'), async (req, res) => {
    const id = intParam(req.params, 'id')
    res.json(await library.diffVersions(ctx(req).db, actor(req), id, parse(diffQuery, req.query, 'query')))
  })
  return router
}

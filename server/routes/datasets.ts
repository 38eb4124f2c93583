/**
 * Datasets and bindings (thin: parse, authorize, call the services).
 *   under /projects/:pid: POST datasets (multipart field `file`), GET datasets, GET/POST bindings,
 *     POST bindings/match, PUT and DELETE bindings/:bid
 *   under /datasets: GET /, GET /:did, PATCH /:did, DELETE /:did, GET /:did/data, GET /:did/original, POST /:did/condition
 */
import { Router } from 'express'
import multer from 'multer'
import { ctx } from '../context'
import { badRequest } from '../errors'
import { requireCapability } from '../middleware/auth'
import { intParam, parse } from '../middleware/validate'
import * as datasets from '../services/datasets'
import * as bindings from '../services/bindings'
import { tooManyWindows, conditionBody, createBindingBody, datasetPurpose, matchBody, updateBindingBody, updateDatasetBody } from '../../shared/api/datasets'
import { z } from 'zod'
import { conditionOffLoop, uploadOffLoop } from '../services/request-work'
import { uploadError } from '../services/upload-checks'
import { deleteDataset } from '../services/deletes'

const uploadFields = z.object({
  name: z.string().trim().max(200).optional(),
  purpose: z.union([datasetPurpose, z.literal('')]).optional(),
})

function maxRows(services: Record<string, unknown>): number {
  const v = services.datasetMaxRows
  return typeof v === 'number' && v > 0 ? v : Number(process.env.PEWTER_MAX_DATASET_ROWS ?? datasets.DEFAULT_MAX_ROWS)
}

export function projectDatasetRoutes() {
  const router = Router({ mergeParams: true })

  router.get('/datasets', requireCapability('read'), async (req, res) => {
    res.json({ datasets: await datasets.listDatasets(ctx(req).db, req.workspace!.id, intParam(req.params, 'pid')) })
  })
  router.post('/datasets', requireCapability('write'), (req, res, next) => {
    const limit = ctx(req).config.uploadLimitBytes
    // defParamCharset: file names sent as raw UTF-8 bytes (what browsers do) are read as UTF-8, not Latin-1
    const upload = multer({ storage: multer.memoryStorage(), defParamCharset: 'utf8', limits: { fileSize: limit, files: 1, fields: 10, parts: 12 } }).single('file')
    upload(req, res, (err: unknown) => next(err ? uploadError(err, limit) : undefined))
  }, async (req, res) => {
    const pid = intParam(req.params, 'pid')
    if (!req.file) throw badRequest("No file: send the CSV as multipart/form-data in the field 'file'", [{ path: 'body.file', message: 'missing' }])
    const fields = parse(uploadFields, req.body ?? {})
    // read, checked and stored on the request pool's thread (off the event loop, time-limited)
    const dto = await uploadOffLoop(ctx(req), {
      workspaceId: req.workspace!.id, projectId: pid, userId: req.auth!.userId, bytes: req.file.buffer, filename: req.file.originalname,
      name: fields.name, purpose: fields.purpose ? fields.purpose : null, maxRows: maxRows(ctx(req).services),
    })
    res.status(201).json(dto)
  })

  router.get('/bindings', requireCapability('read'), async (req, res) => {
    res.json({ bindings: await bindings.listBindings(ctx(req).db, req.workspace!.id, intParam(req.params, 'pid')) })
  })
  router.post('/bindings/match', requireCapability('read'), async (req, res) => {
    res.json(await bindings.matchMapping(ctx(req).db, req.workspace!.id, intParam(req.params, 'pid'), parse(matchBody, req.body)))
  })
  router.post('/bindings', requireCapability('write'), async (req, res) => {
    res.status(201).json(await bindings.createBinding(ctx(req).db, req.workspace!.id, intParam(req.params, 'pid'), parse(createBindingBody, req.body)))
  })
  router.put('/bindings/:bid', requireCapability('write'), async (req, res) => {
    res.json(await bindings.updateBinding(ctx(req).db, req.workspace!.id, intParam(req.params, 'pid'), intParam(req.params, 'bid'), parse(updateBindingBody, req.body)))
  })
  router.delete('/bindings/:bid', requireCapability('write'), async (req, res) => {
    res.json(await bindings.deleteBinding(ctx(req).db, req.workspace!.id, intParam(req.params, 'pid'), intParam(req.params, 'bid')))
  })
  return router
}

export function datasetRoutes() {
  const router = Router({ mergeParams: true })
  router.get('/', requireCapability('read'), async (req, res) => {
    const pid = typeof req.query.projectId === 'string' && req.query.projectId ? intParam(req.query, 'projectId') : undefined
    res.json({ datasets: await datasets.listDatasets(ctx(req).db, req.workspace!.id, pid) })
  })
  router.get('/:did', requireCapability('read'), async (req, res) => {
    res.json(await datasets.getDataset(ctx(req).db, req.workspace!.id, intParam(req.params, 'did')))
  })
  router.patch('/:did', requireCapability('write'), async (req, res) => {
    res.json(await datasets.updateDataset(ctx(req).db, req.workspace!.id, intParam(req.params, 'did'), parse(updateDatasetBody, req.body)))
  })
  router.delete('/:did', requireCapability('write'), async (req, res) => {
    await deleteDataset(ctx(req).db, req.workspace!.id, intParam(req.params, 'did'))
    res.status(204).end()
  })
  router.get('/:did/data', requireCapability('read'), async (req, res) => {
    const q = parse(z.object({ maxPoints: z.coerce.number().int().min(10).max(1_000_000).optional() }), req.query, 'query')
    res.json(await datasets.getDatasetData(ctx(req).db, req.workspace!.id, intParam(req.params, 'did'), q.maxPoints))
  })
  router.get('/:did/original', requireCapability('read'), async (req, res) => {
    const f = await datasets.getOriginal(ctx(req).db, req.workspace!.id, intParam(req.params, 'did'))
    res.setHeader('Content-Type', 'text/csv; charset=utf-8')
    res.setHeader('Content-Disposition', `attachment; filename="${f.filename.replace(/["\\\r\n]/g, '_')}"`)
    res.setHeader('X-Content-SHA256', f.contentHash)
    res.send(f.bytes)
  })
  router.post('/:did/condition', requireCapability('write'), async (req, res) => {
    const many = tooManyWindows(req.body)
    if (many) throw badRequest(many, [{ path: 'body.' + many.split(':')[0], message: many.split(': ')[1] }])
    const body = parse(conditionBody, req.body)
    res.status(201).json(await conditionOffLoop(ctx(req), { workspaceId: req.workspace!.id, datasetId: intParam(req.params, 'did'), userId: req.auth!.userId, body }))
  })
  return router
}

/**
 * Fit runs (thin: parse, authorize, call the services).
 *   under /projects/:pid: POST runs, POST evaluations (a calibrated model on new records, nothing free), GET runs, GET parameter-sets
 *   under /runs: GET /, GET /:rid, DELETE /:rid, GET /:rid/events (server-sent events), POST /:rid/cancel,
 *     POST /:rid/rerun, GET /:rid/export?format=csv|json, GET /:rid/sheet (the calibrated sheet), GET /:rid/landscape?a=&b=&n=,
 *     POST /:rid/parameter-sets {name}, POST /:rid/publish {note?}
 */
import { Router, type Request } from 'express'
import { z } from 'zod'
import { ctx } from '../context'
import { badRequest, notFound } from '../errors'
import { requireCapability } from '../middleware/auth'
import { intParam, parse } from '../middleware/validate'
import type { JobRunner } from '../jobs/types'
import * as runs from '../services/runs'
import { exportCsv, exportJson } from '../services/reports'
import { sheetCompiler } from '../services/request-work'
import { deleteRun } from '../services/deletes'
import { runLandscape, withoutLandscapeCache } from '../services/landscape'
import { followRun } from '../services/run-progress'
import { createEvaluationBody, createRunBody, landscapeQuery, publishFromRunBody, saveParameterSetBody } from '../../shared/api/runs'

const jobs = (req: Request) => ctx(req).services.jobs as JobRunner | undefined

export function projectRunRoutes() {
  const router = Router({ mergeParams: true })
  router.post('/runs', requireCapability('write'), async (req, res) => {
    const body = parse(createRunBody, req.body)
    res.status(201).json(await runs.createRun(ctx(req).db, jobs(req), req.workspace!.id, intParam(req.params, 'pid'), req.auth!.userId, body, null, sheetCompiler(ctx(req))))
  })
  router.post('/evaluations', requireCapability('write'), async (req, res) => {
    const body = parse(createEvaluationBody, req.body)
    res.status(201).json(await runs.createEvaluation(ctx(req).db, jobs(req), req.workspace!.id, intParam(req.params, 'pid'), req.auth!.userId, body, null, sheetCompiler(ctx(req))))
  })
  router.get('/runs', requireCapability('read'), async (req, res) => {
    res.json({ runs: await runs.listRuns(ctx(req).db, req.workspace!.id, { projectId: intParam(req.params, 'pid') }) })
  })
  router.get('/parameter-sets', requireCapability('read'), async (req, res) => {
    res.json({ parameterSets: await runs.listParameterSets(ctx(req).db, req.workspace!.id, intParam(req.params, 'pid')) })
  })
  return router
}

export function runRoutes() {
  const router = Router({ mergeParams: true })
  router.get('/', requireCapability('read'), async (req, res) => {
    const q = parse(z.object({ projectId: z.coerce.number().int().positive().optional(), modelId: z.coerce.number().int().positive().optional() }), req.query, 'query')
    res.json({ runs: await runs.listRuns(ctx(req).db, req.workspace!.id, q) })
  })
  router.get('/:rid', requireCapability('read'), async (req, res) => {
    res.json(withoutLandscapeCache(await runs.getRun(ctx(req).db, req.workspace!.id, intParam(req.params, 'rid'))))
  })

  /** Live progress as server-sent events (services/run-progress follows the run row). */
  router.get('/:rid/events', requireCapability('read'), async (req, res) => {
    const rid = intParam(req.params, 'rid')
    const { db } = ctx(req)
    const first = await runs.getRunState(db, req.workspace!.id, rid)
    if (!first) throw notFound('Run')
    res.status(200)
    res.setHeader('Content-Type', 'text/event-stream; charset=utf-8')
    res.setHeader('Cache-Control', 'no-cache, no-transform')
    res.setHeader('Connection', 'keep-alive')
    res.setHeader('X-Accel-Buffering', 'no')
    res.flushHeaders()
    res.write('retry: 2000\n\n')
    const send = (event: string, data: unknown) => res.write(`event: ${event}\ndata: ${JSON.stringify(data)}\n\n`)
    const stop = followRun(db, req.workspace!.id, rid, first, {
      progress: (state) => send('progress', state),
      end: (info) => { send('end', info); res.end() },
      keepAlive: () => res.write(': keep-alive\n\n'),
      failed: () => res.end(),
    })
    req.on('close', stop)
  })

  router.delete('/:rid', requireCapability('write'), async (req, res) => {
    await deleteRun(ctx(req).db, req.workspace!.id, intParam(req.params, 'rid'))
    res.status(204).end()
  })
  router.post('/:rid/cancel', requireCapability('write'), async (req, res) => {
    res.json(withoutLandscapeCache(await runs.cancelRun(ctx(req).db, jobs(req), req.workspace!.id, intParam(req.params, 'rid'))))
  })
  router.post('/:rid/rerun', requireCapability('write'), async (req, res) => {
    res.status(201).json(await runs.rerun(ctx(req).db, jobs(req), req.workspace!.id, intParam(req.params, 'rid'), req.auth!.userId, sheetCompiler(ctx(req))))
  })
  router.get('/:rid/export', requireCapability('read'), async (req, res) => {
    const { format } = parse(z.object({ format: z.enum(['csv', 'json']).default('json') }), req.query, 'query')
    const rid = intParam(req.params, 'rid')
    const run = withoutLandscapeCache(await runs.getRun(ctx(req).db, req.workspace!.id, rid))
    if (format === 'csv') {
      const text = exportCsv(run)
      res.setHeader('Content-Type', 'text/csv; charset=utf-8')
      res.setHeader('Content-Disposition', `attachment; filename="pewter-run-${rid}.csv"`)
      res.send(text)
    } else {
      const body = exportJson(run, await runs.fittedSheet(ctx(req).db, req.workspace!.id, rid))
      res.setHeader('Content-Disposition', `attachment; filename="pewter-run-${rid}.json"`)
      res.json(body)
    }
  })
  router.get('/:rid/sheet', requireCapability('read'), async (req, res) => {
    const file = await runs.calibratedSheet(ctx(req).db, req.workspace!.id, intParam(req.params, 'rid'))
    res.setHeader('Content-Type', 'text/plain; charset=utf-8')
    res.setHeader('Content-Disposition', `attachment; filename="${file.fileName}"`)
    res.setHeader('X-Pewter-Estimates-Written', file.changed.join(','))
    res.send(file.text)
  })
  router.get('/:rid/landscape', requireCapability('read'), async (req, res) => {
    const q = parse(landscapeQuery, req.query, 'query')
    const row = await runs.getRunRow(ctx(req).db, req.workspace!.id, intParam(req.params, 'rid'))
    if (row.status !== 'succeeded') throw badRequest(`Run ${row.id} has no result (status ${row.status})`)
    // computed in a worker thread (never on this event loop), time-limited, cached on the run
    const answer = await runLandscape(ctx(req), row, q.a, q.b, q.n, req.auth!.userId)
    res.setHeader('X-Pewter-Landscape', answer.cached ? 'cached' : 'computed')
    res.json(answer.landscape)
  })
  router.post('/:rid/parameter-sets', requireCapability('write'), async (req, res) => {
    const body = parse(saveParameterSetBody, req.body)
    res.status(201).json(await runs.saveParameterSet(ctx(req).db, req.workspace!.id, intParam(req.params, 'rid'), req.auth!.userId, body.name))
  })
  router.post('/:rid/publish', requireCapability('write'), async (req, res) => {
    const body = parse(publishFromRunBody, req.body ?? {})
    const actor = { userId: req.auth!.userId, workspaceId: req.workspace!.id, role: req.workspace!.role, ip: req.ip }
    res.status(201).json(await runs.publishFromRun(ctx(req).db, actor, intParam(req.params, 'rid'), body.note))
  })
  return router
}

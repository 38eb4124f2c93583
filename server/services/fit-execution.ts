/**
 * Executes one fit run from its row, in whatever process holds it (the in-process runner, a worker
 * thread of the pool, a `npm run worker` process): load the run, the model version and the datasets,
 * compile the sheet, fit with shared/engine/fit, and write everything back to the run row:
 *
 * - status (lifecycle) running → succeeded ("finished") | failed | cancelled, with started/finished times,
 *   and, once the fit ran, its `outcome` (converged, iteration-limit, time-budget, stalled, failed) and
 *   `converged_by` in their own columns: a fit stopped at a limit is a finished run, not a converged one;
 * - progress (iteration, cost, cost history, an estimated fraction) at most about 4 times a second;
 * - the row's cancel_requested flag is polled every 200 ms: a cancel asked from any process aborts the
 *   fit through its AbortSignal, and the run ends as cancelled within a second;
 * - the result: the fit JSON (shared/api/fit.ts) plus `traces`, measured against simulated outputs per
 *   experiment (estimation and validation), for the plots.
 */
import { readFileSync } from 'node:fs'
import { and, eq, inArray, sql } from 'drizzle-orm'
import type { Db } from '../db/client'
import { datasets, modelVersions, runs } from '../db/schema'
import { workspaceParts, workspacePartTexts } from './part-library'
import { segmentHelpers, segmentThreadsOption } from '../jobs/segment-threads'
import { compileModel, type CompiledModel } from '../../shared/sheet'
import { alsoAbortedWhen } from '../jobs/abort-flag'
import { toDeclared, toInternal } from '../../shared/sheet/compiled'
import { simulate } from '../../shared/engine'
import { makeProblem, type FitOptions } from '../../shared/engine/fit/driver'
import { declaredEstimates } from '../../shared/engine/fit/result'
import { FitAborted, runFit } from '../../shared/engine/fit'
import type { ExperimentData, FitProblem, PreparedExperiment, ProblemSpec } from '../../shared/engine/fit/problem'
import { BoxTransform } from '../../shared/engine/fit/transform'
import { costLandscape } from '../../shared/engine/landscape'
import { evaluateModel, type EvaluationSpec } from '../../shared/engine/fit/evaluate'
import type { EvaluationResult } from '../../shared/api/evaluation'
import { covarianceFrom, outputBandHalfWidth } from '../../shared/engine/stats/output-band'
import { describeOutcome, type FitResult, type LandscapeResult } from '../../shared/api/fit'
import type { ColumnMapping, ColumnMeta } from '../../shared/api/datasets'
import type { LiveSegmentLine, OutputTrace, ProgressEstimate, RunProgress, RunSettings } from '../../shared/api/runs'
import { experimentFromRecord, RecordMappingError } from '../../shared/data/column-mapping'
import { columnsOf, type StoredData } from './datasets'

const pkg = JSON.parse(readFileSync(new URL('../../package.json', import.meta.url), 'utf8')) as { version: string }
/** Recorded in every run's provenance. */
export const ENGINE_VERSION = `pewter-engine ${pkg.version}`

export interface ExecuteOptions {
  signal?: AbortSignal
  workerId?: string
  /** spreads a multi-start fit's starts over worker threads (server/jobs/fan-out.ts) */
  runStarts?: FitOptions['runStarts']
}

export interface LoadedDataset {
  id: number
  name: string
  columns: ColumnMeta[]
  data: StoredData
}

export class RunInputError extends Error {
  constructor(message: string) {
    super(message)
    this.name = 'RunInputError'
  }
}


/** One dataset as a fit experiment: time in the sheet's unit, signals converted to internal units. */
export function experimentFrom(model: CompiledModel, ds: LoadedDataset, mapping: ColumnMapping): ExperimentData {
  try {
    return experimentFromRecord(model, ds, mapping)
  } catch (e) {
    if (e instanceof RecordMappingError) throw new RunInputError(e.message)
    throw e
  }
}

/** The engine's problem spec from a run's settings (declared units → internal units). */
export function problemSpec(model: CompiledModel, settings: RunSettings, est: LoadedDataset[], val: LoadedDataset[]): ProblemSpec {
  const set: Record<string, number> = {}
  const bounds: Record<string, [number, number]> = {}
  const free: string[] = []
  const fix: string[] = []
  const freeNames = new Set(settings.free.map((f) => f.name))
  const stateNames = new Set(settings.initialStates.map((f) => f.name))
  /** one estimated quantity: its bounds and start from declared to internal units */
  const estimate = (f: RunSettings['free'][number], u: { scale: number; offset: number } | undefined, what: string, noun: string) => {
    if (!u) throw new RunInputError(`${what} '${f.name}': the sheet has no ${noun} of that name`)
    const lo = toInternal(u, f.lower)
    const hi = toInternal(u, f.upper)
    bounds[f.name] = [Math.min(lo, hi), Math.max(lo, hi)]
    set[f.name] = toInternal(u, f.start)
    free.push(f.name)
  }
  for (const f of settings.free) estimate(f, model.params.find((q) => q.name === f.name), 'free parameter', 'parameter')
  for (const f of settings.initialStates) estimate(f, model.states.find((q) => q.name === f.name), 'initial state', 'state')
  for (const p of model.params) if (!p.fixed && !freeNames.has(p.name)) fix.push(p.name)
  for (const s of model.states) if (s.estimate && !stateNames.has(s.name)) fix.push(s.name)
  return {
    experiments: est.map((d) => experimentFrom(model, d, settings.mapping)),
    validation: val.map((d) => experimentFrom(model, d, settings.mapping)),
    set, bounds, free, fix,
    weighting: settings.weighting,
    validationStart: settings.validationStart ?? 'sheet',
  }
}

export function fitOptions(settings: RunSettings, extra: Partial<FitOptions> = {}): FitOptions {
  const t = settings.tolerances
  return {
    method: settings.method,
    starts: Math.max(0, settings.starts - 1),
    seed: settings.seed,
    ...(t.rtol !== undefined ? { rtol: t.rtol } : { rtol: 1e-6 }),
    ...(t.atol !== undefined ? { atol: t.atol } : {}),
    ...(t.ftol !== undefined ? { ftol: t.ftol } : {}),
    ...(t.xtol !== undefined ? { xtol: t.xtol } : {}),
    ...(t.gtol !== undefined ? { gtol: t.gtol } : {}),
    ...(t.maxIterations !== undefined ? { maxIterations: t.maxIterations } : { maxIterations: 200 }),
    ...(settings.segments !== undefined && settings.segments > 1 ? { segments: { segments: settings.segments } } : {}),
    ...extra,
  }
}

export async function loadRunInputs(db: Db, run: typeof runs.$inferSelect) {
  const settings = run.settings as RunSettings
  const [version] = await db.select().from(modelVersions)
    .where(and(eq(modelVersions.modelId, run.modelId), eq(modelVersions.number, run.modelVersion))).limit(1)
  if (!version) throw new RunInputError(`model ${run.modelId} version ${run.modelVersion} no longer exists`)
  const ids = [...settings.estimation, ...settings.validation]
  const rows = ids.length ? await db.select({ id: datasets.id, name: datasets.name, columns: datasets.columns, data: datasets.data, projectId: datasets.projectId })
    .from(datasets).where(inArray(datasets.id, ids)) : []
  const byId = new Map(rows.filter((r) => r.projectId === run.projectId).map((r) => [r.id, { id: r.id, name: r.name, columns: columnsOf(r), data: r.data as StoredData }]))
  const get = (id: number) => {
    const d = byId.get(id)
    if (!d) throw new RunInputError(`dataset ${id} no longer exists in this project`)
    return d
  }
  // parts are read from the run's workspace library at the versions the sheet pins
  const model = compileModel(version.text, { resolvePart: await workspaceParts(db, run.workspaceId, version.text) })
  return { settings, model, est: settings.estimation.map(get), val: settings.validation.map(get), versionText: version.text }
}

/** Measured against simulated outputs at the estimate, for every experiment (declared units, seconds), with the covariance band. */
export function simulateTraces(model: CompiledModel, prob: FitProblem, result: FitResult, est: LoadedDataset[], val: LoadedDataset[], mapping: ColumnMapping): OutputTrace[] {
  const best = result.starts.find((s) => s.index === result.bestStart)
  const theta = best && best.value.every((v) => v !== null) ? (best.value as number[]) : null
  if (!theta || theta.length !== prob.n) return []
  const cov = internalCovariance(model, prob, result)
  const tq = result.tQuantile ?? NaN
  const traces: OutputTrace[] = []
  const p = new Float64Array(model.np)
  const x0 = new Float64Array(model.nx)
  const all = [...prob.experiments.map((ex, e) => ({ ex, e, ds: est[e], validation: false })), ...prob.validation.map((ex, k) => ({ ex, e: -1, ds: val[k], validation: true }))]
  all.forEach(({ ex, e, ds, validation }, idx) => {
    const hasX0 = prob.fillExperiment(theta, e, p, x0)
    // a validation record whose initial states were estimated (parameters frozen) starts from them
    const started = validation ? result.validationInitialStates?.filter((v) => v.experiment === ex.data.name) ?? [] : []
    for (const v of started) {
      const k = model.states.findIndex((st) => st.name === v.name)
      if (k >= 0) x0[k] = toInternal(model.states[k], v.value)
    }
    const withBand = cov !== null && Number.isFinite(tq)
    let res = prob.simulateExperiment(ex, p, hasX0 || started.length > 0 ? x0 : undefined, withBand)
    if (!res && withBand) res = prob.simulateExperiment(ex, p, hasX0 || started.length > 0 ? x0 : undefined, false)
    let half: Float64Array | null = null
    if (res?.dy && cov) {
      const ns = ex.sensParams.length + ex.sensStates.length
      // sensitivity column c → estimated quantity q; on a validation record only the shared parameters count
      const cols = new Int32Array(ns).fill(-1)
      prob.quantities.forEach((q, qi) => {
        const c = ex.sensCol[qi]
        if (c >= 0 && (!validation || (q.kind === 'param' && q.experiment === null))) cols[c] = qi
      })
      half = outputBandHalfWidth(res.dy, ex.tOut.length * model.ny, ns, cols, cov, prob.n, tq)
    }
    traces.push(...tracesOf(model, ex, res?.y ?? null, half, ds, idx, validation, mapping))
  })
  return traces
}

/** One record's measured and simulated outputs (and band half-widths) as plot traces: declared units, seconds. */
export function tracesOf(model: CompiledModel, ex: PreparedExperiment, y: Float64Array | null, half: Float64Array | null,
  ds: LoadedDataset, idx: number, validation: boolean, mapping: ColumnMapping): OutputTrace[] {
  const out: OutputTrace[] = []
  model.outputs.forEach((o, j) => {
    const col = mapping.outputs[o.name]
    const meas = ex.data.outputs[o.name]
    if (!col || !meas) return
    const n = ex.tOut.length
    const t = new Array<number>(n)
    const measured = new Array<number | null>(n)
    const simulated = new Array<number | null>(n)
    const band = half ? new Array<number | null>(n) : null
    for (let k = 0; k < n; k++) {
      t[k] = ex.tOut[k] * model.secondsPerTimeUnit
      const m = meas[ex.timeIndex[k]]
      measured[k] = Number.isFinite(m) ? toDeclared(o, m) : null
      const s = y ? y[k * model.ny + j] : NaN
      simulated[k] = Number.isFinite(s) ? toDeclared(o, s) : null
      if (band && half) {
        const h = half[k * model.ny + j] / Math.abs(o.scale)
        band[k] = Number.isFinite(h) ? h : null
      }
    }
    out.push({ experiment: idx, datasetId: ds.id, datasetName: ds.name, validation, output: o.name, column: col, unit: o.unit, t, measured, simulated, ...(band ? { band } : {}) })
  })
  return out
}

/**
 * The linearised covariance of the estimated quantities in internal units, from the result's standard
 * errors and correlations; quantities held at a bound contribute nothing. Null when a quantity is not
 * determined by the data (its variance is unbounded) or the result has no covariance.
 */
function internalCovariance(model: CompiledModel, prob: FitProblem, result: FitResult): Float64Array | null {
  const byKey = new Map([...result.parameters.map((r) => [`p|${r.name}|${r.experiment}`, r] as const), ...result.initialStates.map((r) => [`s|${r.name}|${r.experiment}`, r] as const)])
  const rows = prob.quantities.map((q) => byKey.get(`${q.kind === 'param' ? 'p' : 's'}|${q.name}|${q.experiment}`))
  if (rows.some((r) => !r || !r.determined)) return null
  const se = rows.map((r, q) => {
    if (!r || r.atBound) return 0
    const qq = prob.quantities[q]
    const u = qq.kind === 'param' ? model.params[qq.index] : model.states[qq.index]
    return r.stdError === null ? NaN : r.stdError * Math.abs(u.scale)
  })
  if (result.correlation.names.length !== prob.n) return null
  return covarianceFrom(se, result.correlation.matrix)
}

/** The cost over a grid of two estimated quantities, the others at the estimate (results page, on request). */
export async function computeLandscape(db: Db, run: typeof runs.$inferSelect, a: string, b: string, n: number): Promise<LandscapeResult> {
  const { settings, model, est, val } = await loadRunInputs(db, run)
  const result = run.result as unknown as FitResult
  const spec = problemSpec(model, settings, est, val)
  const opts = fitOptions(settings)
  const prob = makeProblem(model, spec, simulate, opts)
  const best = result.starts.find((s) => s.index === result.bestStart)
  if (!best || best.value.some((v) => v === null) || best.value.length !== prob.n) throw new RunInputError('the run has no usable estimate')
  const theta = Float64Array.from(best.value as number[])
  const start = Float64Array.from(best.start)
  const rows = [...result.parameters, ...result.initialStates]
  const se = Float64Array.from(rows, (r, q) => {
    const qq = prob.quantities[q]
    const u = qq.kind === 'param' ? model.params[qq.index] : model.states[qq.index]
    return r.stdError === null ? NaN : r.stdError * Math.abs(u.scale)
  })
  const tr = new BoxTransform(prob.lower, prob.upper, true)
  return costLandscape(prob, theta, start, { x: a, y: b, n }, tr, se, (q, v) => {
    const qq = prob.quantities[q]
    return toDeclared(qq.kind === 'param' ? model.params[qq.index] : model.states[qq.index], v)
  })
}

/**
 * An evaluation run: the model version with the stored parameter values simulated on each record,
 * nothing free (shared/engine/fit/evaluate.ts), with the plot traces.
 */
async function runEvaluation(db: Db, row: typeof runs.$inferSelect, signal: AbortSignal): Promise<EvaluationResult & { traces: OutputTrace[] }> {
  const settings = row.settings as RunSettings
  const { model, est } = await loadRunInputs(db, row)
  const source = settings.valuesFrom?.kind === 'run' ? 'run' as const : 'parameter-set' as const
  const set: EvaluationSpec['set'] = {}
  for (const [name, v] of Object.entries(settings.values ?? {})) {
    const q = model.params.find((x) => x.name === name)
    if (!q) throw new RunInputError(`parameter '${name}' of the ${settings.valuesFrom?.kind === 'run' ? 'source run' : 'parameter set'} is not in the sheet`)
    set[name] = { value: toInternal(q, v), source }
  }
  const ev = await evaluateModel(model, {
    records: est.map((d) => experimentFrom(model, d, settings.mapping)), set, start: settings.validationStart ?? 'sheet',
  }, fitOptions(settings, { signal }), simulate)
  const traces: OutputTrace[] = []
  ev.prob.experiments.forEach((ex, e) => traces.push(...tracesOf(model, ex, ev.simulated[e], null, est[e], e, true, settings.mapping)))
  return { ...ev.result, traces }
}

const PROGRESS_INTERVAL_MS = 250
const SEGMENT_LINES_INTERVAL_MS = 500
const CANCEL_POLL_MS = 200

/**
 * Runs the fit of run `runId` to its end and stores the outcome. Never throws for a fit that fails:
 * the failure is stored on the row. Returns the final status.
 */
export async function executeRun(db: Db, runId: number, opts: ExecuteOptions = {}): Promise<string> {
  const [row] = await db.select().from(runs).where(eq(runs.id, runId)).limit(1)
  if (!row) return 'missing'
  if (row.status === 'succeeded' || row.status === 'failed' || row.status === 'cancelled') return row.status
  if (row.cancelRequested) {
    await db.update(runs).set({ status: 'cancelled', finishedAt: sql`now()`, error: 'Cancelled before it started.' }).where(eq(runs.id, runId))
    return 'cancelled'
  }
  const started = await db.update(runs)
    .set({ status: 'running', startedAt: sql`coalesce(${runs.startedAt}, now())`, ...(opts.workerId ? { workerId: opts.workerId } : {}) })
    .where(and(eq(runs.id, runId), inArray(runs.status, ['queued', 'running'])))
    .returning({ id: runs.id })
  if (!started.length) return 'finished'

  const controller = new AbortController()
  // the outer signal may be raised through shared memory while the fit computes (jobs/abort-flag.ts)
  alsoAbortedWhen(controller.signal, () => opts.signal?.aborted === true)
  const onOuterAbort = () => controller.abort()
  opts.signal?.addEventListener('abort', onOuterAbort)
  if (opts.signal?.aborted) controller.abort()
  let cancelled = false
  let polling = false
  const poll = setInterval(() => {
    if (polling) return
    polling = true
    db.select({ c: runs.cancelRequested }).from(runs).where(eq(runs.id, runId))
      .then((r) => { if (r[0]?.c) { cancelled = true; controller.abort() } })
      .catch(() => undefined)
      .finally(() => { polling = false })
  }, CANCEL_POLL_MS)

  const settings = row.settings as RunSettings
  const history: number[] = []
  let best = Infinity
  let lastWrite = 0
  let pending: RunProgress | null = null
  let lines: { segmentLines: LiveSegmentLine[]; segmentIteration: number } | Record<string, never> = {}
  let linesAt = 0
  let writing: Promise<unknown> = Promise.resolve()
  const writeProgress = (p: RunProgress) => {
    writing = writing.then(() => db.update(runs).set({ progress: p }).where(and(eq(runs.id, runId), eq(runs.status, 'running')))).catch(() => undefined)
  }
  let estimates: ProgressEstimate[] = []
  /** starts of a multi-start fit that have ended with an estimate (a cancel keeps their best) */
  let withEstimate = 0
  const progress = (iteration: number, cost: number | null, start: number, message: string, fraction: number): RunProgress => ({
    iteration, cost, costHistory: thin(history, 500), fraction, start, starts: settings.starts, message, updatedAt: new Date().toISOString(), estimates,
  })
  writeProgress(progress(0, null, 0, 'preparing the fit', 0.01))

  const finish = async (status: string, values: Partial<typeof runs.$inferInsert>) => {
    clearInterval(poll)
    opts.signal?.removeEventListener('abort', onOuterAbort)
    await writing
    await db.update(runs).set({ status, finishedAt: sql`now()`, ...values }).where(eq(runs.id, runId))
    return status
  }

  // a cancel may reach the fit through its thread (the pool's abort) before the poll sees the row's flag
  const byRequest = async () => {
    if (!cancelled) cancelled = await db.select({ c: runs.cancelRequested }).from(runs).where(eq(runs.id, runId)).then((r) => r[0]?.c === true, () => false)
    return cancelled
  }
  const why = async () => ((await byRequest()) ? 'Cancelled by request' : 'Stopped')
  const noResult = async () => `${await why()} before any start had finished with an estimate: there is no result to keep.`
  const evaluationStopped = async () => ((await byRequest()) ? 'Cancelled by request.' : 'Stopped: the evaluation was aborted.')

  try {
    if (settings.kind === 'evaluation') {
      writeProgress(progress(0, null, 0, 'simulating the records', 0.2))
      const result = await runEvaluation(db, row, controller.signal)
      if (cancelled || controller.signal.aborted) return await finish('cancelled', { error: await evaluationStopped() })
      return await finish('succeeded', {
        result: result as unknown as Record<string, unknown>, error: null,
        progress: progress(0, null, 0, `finished: ${result.outputs.length} output${result.outputs.length === 1 ? '' : 's'} evaluated`, 1),
      })
    }
    const { model, est, val, versionText } = await loadRunInputs(db, row)
    const spec = problemSpec(model, settings, est, val)
    // built once without the abort signal: its names pick the landscape, then it simulates the traces
    const probe = makeProblem(model, spec, simulate, fitOptions(settings))
    const landscape = probe.names.length >= 2 ? { x: probe.names[0], y: probe.names[1], n: 21 } : undefined
    const options = fitOptions(settings, {
      signal: controller.signal,
      landscape,
      ...(opts.runStarts ? { runStarts: opts.runStarts } : {}),
      onStartFinished: (n) => { withEstimate = n },
      onProgress: (info) => {
        if (info.cost <= best && info.parameters.length === probe.n) estimates = declaredEstimates(model, probe, info.parameters)
        if (info.cost < best) best = info.cost
        history.push(best)
        const start = info.start ?? 0
        const fraction = Math.min(0.97, (start + 1 - Math.exp(-(info.iteration + 1) / 12)) / settings.starts)
        const how = options.segments ? `multiple shooting over ${options.segments.segments} segments, ` : ''
        const now = Date.now()
        // the segments' own lines while multiple shooting runs, at most twice a second
        if (info.segmentLines && now - linesAt >= SEGMENT_LINES_INTERVAL_MS) {
          linesAt = now
          lines = { segmentLines: info.segmentLines(), segmentIteration: info.iteration }
        }
        const done = withEstimate > 0 ? ` (${withEstimate} finished)` : ''
        pending = { ...progress(info.iteration, info.cost, start, `${how}start ${start + 1} of ${settings.starts}, iteration ${info.iteration}${done}`, fraction), ...lines }
        if (now - lastWrite >= PROGRESS_INTERVAL_MS) { lastWrite = now; writeProgress(pending); pending = null }
      },
    })
    if (options.segments) {
      const { rtol, atol, solver, maxSteps } = options
      const threads = segmentThreadsOption(process.env.PEWTER_SEGMENT_THREADS, 'PEWTER_SEGMENT_THREADS')
      const parts = await workspacePartTexts(db, row.workspaceId, versionText)
      options.segmentEvaluator = segmentHelpers().factory({ sheet: versionText, parts, spec, options: { rtol, atol, solver, maxSteps }, segments: options.segments }, threads)
    }
    const result = await runFit(model, spec, options, simulate)
    const tracesOf = (r: FitResult): OutputTrace[] => {
      try { return simulateTraces(model, probe, r, est, val, settings.mapping) } catch { return [] }
    }
    if (pending) writeProgress(pending)
    if (result.stoppedEarly) {
      // cancelled after some starts finished: their best is kept on the cancelled run, with its traces
      const { finishedStarts, plannedStarts } = result.stoppedEarly
      const traces = tracesOf(result)
      return await finish('cancelled', {
        outcome: result.status, convergedBy: result.convergedBy,
        result: { ...result, traces } as unknown as Record<string, unknown>,
        error: `${await why()} after ${finishedStarts} of ${plannedStarts} starts: the result shown is the best of the finished starts.`,
        progress: progress(result.iterations, result.sse, finishedStarts, 'stopped, best finished start kept', 1),
      })
    }
    if (cancelled || controller.signal.aborted || result.status === 'aborted') {
      return await finish('cancelled', { error: await noResult(), progress: progress(0, best === Infinity ? null : best, 0, 'cancelled', 0) })
    }
    const outcome = { outcome: result.status, convergedBy: result.convergedBy }
    if (result.status === 'failed') {
      const where = result.reasonStart !== null && settings.starts > 1 ? ` (start ${result.reasonStart})` : ''
      return await finish('failed', { ...outcome, error: `The fit failed${where}: ${result.reason}`, result: { ...result, traces: [] } as unknown as Record<string, unknown> })
    }
    const traces = tracesOf(result)
    const lastHistory = result.costHistory.length ? result.costHistory : history
    return await finish('succeeded', {
      ...outcome,
      result: { ...result, traces } as unknown as Record<string, unknown>,
      error: null,
      // a multiple-shooting run keeps the segments' lines of its last shooting iteration
      progress: { ...progress(result.iterations, result.sse, settings.starts - 1, `finished, ${describeOutcome(result.status, result.convergedBy)}: ${result.reason}`, 1), costHistory: thin(lastHistory, 500), ...lines },
    })
  } catch (e) {
    const msg = e instanceof Error ? e.message : String(e)
    if (cancelled || controller.signal.aborted) {
      // an abort before any start finished; anything else raised while stopping is named, not hidden
      if (settings.kind === 'evaluation') return await finish('cancelled', { error: await evaluationStopped() })
      if (e instanceof FitAborted) return await finish('cancelled', { error: await noResult() })
      console.error(`[pewter] run ${runId}: error while stopping:`, e)
      return await finish('cancelled', { error: `${await why()}; while stopping, the fit raised an error: ${msg}` })
    }
    const known = e instanceof Error && ['FitInputError', 'RunInputError', 'SheetError', 'SimulationError', 'InputTraceError'].includes(e.name)
    if (!known && process.env.NODE_ENV !== 'test') console.error(`[pewter] run ${runId} failed:`, e)
    return await finish('failed', { error: known ? msg : `The fit stopped on an internal error: ${msg}` })
  }
}

function thin(v: number[], max: number): number[] {
  if (v.length <= max) return v.slice()
  const out: number[] = []
  const step = (v.length - 1) / (max - 1)
  for (let i = 0; i < max; i++) out.push(v[Math.round(i * step)])
  return out
}

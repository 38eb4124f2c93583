/**
 * Fit runs: the request that starts one, its stored settings and provenance, progress and reply shapes.
 * The result itself is the fitting issue's JSON (shared/api/fit.ts) plus the series the results pages plot.
 */
import { z } from 'zod'
import { nameProblem, visibleText } from './text'
import { columnMapping } from './datasets'
import { convergenceTest, fitMethod, fitResult, fitStatus, fitWeighting, landscapeResult } from './fit'
import { evaluationResult } from './evaluation'
import { versionDto } from './models'

/**
 * The run's lifecycle. 'succeeded' means the fit ran to its end and stored a result ("finished" on the
 * pages); whether the optimiser converged is the separate `outcome`.
 */
export const runStatus = z.enum(['queued', 'running', 'succeeded', 'failed', 'cancelled'])
export type RunStatus = z.infer<typeof runStatus>
export const terminalStatuses: readonly RunStatus[] = ['succeeded', 'failed', 'cancelled']

const weighting = fitWeighting

/** A free quantity of the fit: a parameter or an estimated initial state, in the sheet's declared unit. */
export const freeSpec = z.object({
  name: z.string().min(1),
  lower: z.number().optional(),
  upper: z.number().optional(),
  start: z.number().optional(),
})
export type FreeSpec = z.infer<typeof freeSpec>

const freeList = z.array(z.union([z.string().min(1).transform((name) => ({ name })), freeSpec])).max(60)

export const tolerances = z.object({
  rtol: z.number().positive().max(1e-2).optional(),
  atol: z.number().positive().optional(),
  ftol: z.number().positive().max(0.5).optional(),
  xtol: z.number().positive().max(0.5).optional(),
  gtol: z.number().positive().max(0.5).optional(),
  maxIterations: z.number().int().min(1).max(10_000).optional(),
})
export type Tolerances = z.infer<typeof tolerances>

export const createRunBody = z.object({
  modelId: z.coerce.number().int().positive(),
  version: z.coerce.number().int().positive(),
  name: z.string().trim().max(200).optional()
    .superRefine((s, ctx) => { const p = s ? nameProblem(s) : null; if (p) ctx.addIssue({ code: 'custom', message: `the run name ${p}` }) }),
  bindingId: z.coerce.number().int().positive().optional(),
  estimation: z.array(z.coerce.number().int().positive()).min(1, 'choose at least one estimation dataset').max(20),
  validation: z.array(z.coerce.number().int().positive()).max(20).default([]),
  /** overrides the binding's mapping (or the automatic match when there is no binding) */
  mapping: columnMapping.optional(),
  /** free parameters (default: the sheet's non-fixed ones, with the sheet's bounds and values) */
  free: freeList.optional(),
  /** initial states to estimate (default: those the sheet marks `estimate`) */
  initialStates: freeList.optional(),
  method: fitMethod.default('lm'),
  starts: z.number().int().min(1).max(64).default(1),
  /** multiple shooting: segments per estimation record (1 or absent: single shooting) */
  segments: z.number().int().min(1).max(1000).optional(),
  weighting: weighting.default('sheet'),
  tolerances: tolerances.default({}),
  /** seed of the multi-start sampling (default: drawn and stored, so "run again" reproduces) */
  seed: z.number().int().min(0).max(2 ** 31 - 1).optional(),
  /** validation records start from the sheet's initial state, or from initial states estimated on each (parameters frozen) */
  validationStart: z.enum(['sheet', 'estimate']).optional(),
  /** the run this one repeats, when started from its "run again" form (a run of the same project) */
  rerunOf: z.coerce.number().int().positive().optional(),
})
export type CreateRunBody = z.infer<typeof createRunBody>

/** A fit estimates free quantities; an evaluation simulates a calibrated model on records with nothing free. */
export const runKind = z.enum(['fit', 'evaluation'])
export type RunKind = z.infer<typeof runKind>

/**
 * Evaluate a calibrated model on new records: the model version's values, overridden by a saved
 * parameter set or by a finished fit run's estimates (at most one of the two).
 */
export const createEvaluationBody = z.object({
  modelId: z.coerce.number().int().positive(),
  version: z.coerce.number().int().positive(),
  name: z.string().trim().max(200).optional()
    .superRefine((s, ctx) => { const p = s ? nameProblem(s) : null; if (p) ctx.addIssue({ code: 'custom', message: `the evaluation name ${p}` }) }),
  bindingId: z.coerce.number().int().positive().optional(),
  datasets: z.array(z.coerce.number().int().positive()).min(1, 'choose at least one record to evaluate on').max(20),
  mapping: columnMapping.optional(),
  parameterSetId: z.coerce.number().int().positive().optional(),
  sourceRunId: z.coerce.number().int().positive().optional(),
  /** records start from the sheet's initial state, or from initial states estimated on each (parameters frozen) */
  start: z.enum(['sheet', 'estimate']).default('sheet'),
}).refine((b) => !(b.parameterSetId && b.sourceRunId), { message: 'give a parameter set or a source run, not both', path: ['sourceRunId'] })
export type CreateEvaluationBody = z.infer<typeof createEvaluationBody>

/** What a run row stores as its settings: every choice resolved, so the run can be reproduced. */
export const runSettings = z.object({
  name: z.string(),
  bindingId: z.number().nullable(),
  estimation: z.array(z.number()),
  validation: z.array(z.number()),
  mapping: columnMapping,
  free: z.array(z.object({ name: z.string(), lower: z.number(), upper: z.number(), start: z.number() })),
  initialStates: z.array(z.object({ name: z.string(), lower: z.number(), upper: z.number(), start: z.number() })),
  method: fitMethod,
  starts: z.number(),
  /** segments per estimation record for multiple shooting; absent or 1: single shooting */
  segments: z.number().optional(),
  weighting,
  tolerances,
  seed: z.number(),
  /** set on a run started with "run again" */
  rerunOf: z.number().nullable(),
  /** absent on runs stored before the option existed (then 'sheet') */
  validationStart: z.enum(['sheet', 'estimate']).optional(),
  /** absent on fits stored before evaluations existed (then 'fit') */
  kind: runKind.optional(),
  /** evaluation: the parameter values (declared units) that replace the sheet's, and where they came from */
  values: z.record(z.string(), z.number()).optional(),
  valuesFrom: z.object({ kind: z.enum(['version', 'parameter-set', 'run']), id: z.number().nullable(), name: z.string() }).optional(),
})
export type RunSettings = z.infer<typeof runSettings>

export const provenance = z.object({
  modelId: z.number(),
  modelVersion: z.number(),
  modelVersionId: z.number(),
  /** sha-256 of the sheet text */
  sheetHash: z.string(),
  datasets: z.array(z.object({ id: z.number(), name: z.string(), contentHash: z.string(), role: z.enum(['estimation', 'validation', 'evaluation']) })),
  engineVersion: z.string(),
  seed: z.number(),
  createdAt: z.string(),
})
export type Provenance = z.infer<typeof provenance>

/**
 * While a multiple-shooting fit runs: one output of one estimation record, measured, and each
 * segment's own simulated line at the current iterate (time in seconds, values in the declared unit;
 * thinned to a few hundred points).
 */
export const liveSegmentLine = z.object({
  experiment: z.string(),
  output: z.string(),
  unit: z.string(),
  t: z.array(z.number()),
  measured: z.array(z.number().nullable()),
  segments: z.array(z.object({ t: z.array(z.number()), y: z.array(z.number().nullable()) })),
})
export type LiveSegmentLine = z.infer<typeof liveSegmentLine>
/** One estimated quantity while the fit runs (per-record quantities carry the record in brackets). */
export const progressEstimate = z.object({ name: z.string(), unit: z.string(), value: z.number() })
export type ProgressEstimate = z.infer<typeof progressEstimate>

export const runProgress = z.object({
  /** iteration of the current start */
  iteration: z.number(),
  cost: z.number().nullable(),
  /** best cost per iteration so far (thinned to at most 500 points) */
  costHistory: z.array(z.number()),
  /** 0..1, an estimate */
  fraction: z.number(),
  start: z.number(),
  starts: z.number(),
  message: z.string(),
  updatedAt: z.string(),
  /** multiple shooting: the segments' lines at iteration `segmentIteration` (refreshed at most twice a second) */
  segmentLines: z.array(liveSegmentLine).optional(),
  segmentIteration: z.number().optional(),
  /** the estimates at the best cost so far, in declared units (absent on rows written before they were reported) */
  estimates: z.array(progressEstimate).optional(),
})
export type RunProgress = z.infer<typeof runProgress>

/** Measured against simulated output for one experiment (time in seconds, values in the sheet's declared unit). */
export const outputTrace = z.object({
  experiment: z.number(),
  datasetId: z.number(),
  datasetName: z.string(),
  validation: z.boolean(),
  output: z.string(),
  column: z.string(),
  unit: z.string(),
  t: z.array(z.number()),
  measured: z.array(z.number().nullable()),
  simulated: z.array(z.number().nullable()),
  /**
   * half-width of the 95 % band of the simulated output from the parameter covariance (first-order
   * propagation through the output sensitivities); absent when the covariance is not available
   */
  band: z.array(z.number().nullable()).optional(),
})
export type OutputTrace = z.infer<typeof outputTrace>

export const landscapeDto = landscapeResult
export type LandscapeDto = z.infer<typeof landscapeDto>

export const landscapeQuery = z.object({
  a: z.string().min(1),
  b: z.string().min(1),
  n: z.coerce.number().int().min(5).max(41).default(21),
})

export const runSummaryDto = z.object({
  id: z.number(),
  projectId: z.number(),
  projectName: z.string(),
  modelId: z.number(),
  modelTitle: z.string(),
  modelVersion: z.number(),
  name: z.string(),
  status: runStatus,
  /** the optimiser's outcome (null until the fit ran) and, when converged, which test passed */
  outcome: fitStatus.nullable(),
  convergedBy: convergenceTest.nullable(),
  progress: runProgress.nullable(),
  error: z.string().nullable(),
  cancelRequested: z.boolean(),
  createdAt: z.string(),
  startedAt: z.string().nullable(),
  finishedAt: z.string().nullable(),
  createdBy: z.number().nullable(),
  /** weighted cost at the estimate, when finished (null for an evaluation) */
  sse: z.number().nullable(),
  kind: runKind,
  /**
   * RMSE on the records the fit never saw (validation records of a fit, every record of an evaluation),
   * when there is exactly one such output; else the root mean square over those outputs' normalised RMSE is
   * not comparable, so the list shows `validationNrmse`
   */
  validationRmse: z.number().nullable(),
  /** mean normalised RMSE over the outputs on unseen records (comparable across outputs of different units) */
  validationNrmse: z.number().nullable(),
})
export type RunSummaryDto = z.infer<typeof runSummaryDto>

/** The `progress` event of GET …/runs/:rid/events: the run's state as it changes (sent again on reconnect). */
export const runStateEvent = runSummaryDto.pick({ status: true, progress: true, error: true, cancelRequested: true })
export type RunStateEvent = z.infer<typeof runStateEvent>

/** GET …/runs and …/projects/:pid/runs */
export const runListReply = z.object({ runs: z.array(runSummaryDto) })

export const runDto = runSummaryDto.extend({
  settings: runSettings,
  provenance,
  /** the fit JSON (shared/api/fit.ts) plus `traces` and `landscape` for the plots */
  result: z.record(z.string(), z.unknown()).nullable(),
  caution: z.string(),
})
export type RunDto = z.infer<typeof runDto>

/**
 * A stored run result as the results pages read it: the fit JSON plus the traces the server simulated
 * (absent on results stored without them). Unknown keys (caches) are kept.
 */
export const storedRunResult = fitResult.extend({ traces: z.array(outputTrace).default([]) }).loose()
export type StoredRunResult = z.infer<typeof storedRunResult>

/** A stored evaluation result (a run of kind 'evaluation': nothing free) with the traces the server simulated. */
export const storedEvaluationResult = evaluationResult.extend({ traces: z.array(outputTrace).default([]) }).loose()
export type StoredEvaluationResult = z.infer<typeof storedEvaluationResult>

export const saveParameterSetBody = z.object({ name: visibleText('the parameter set name', 200) })
export const publishFromRunBody = z.object({ note: z.string().trim().max(2000).optional() })

export const parameterSetDto = z.object({
  id: z.number(),
  projectId: z.number(),
  runId: z.number().nullable(),
  modelId: z.number(),
  name: z.string(),
  values: z.record(z.string(), z.object({ value: z.number(), unit: z.string() })),
  createdAt: z.string(),
})
export type ParameterSetDto = z.infer<typeof parameterSetDto>

/** GET …/projects/:pid/parameter-sets and …/models/:id/parameter-sets */
export const parameterSetListReply = z.object({ parameterSets: z.array(parameterSetDto) })

/** POST …/runs/:rid/publish: the new model version and the parameters set to the estimates */
export const publishFromRunReply = versionDto.extend({ changed: z.array(z.string()) })

/** Shown on every result and written into every export. */
export const RESULT_CAUTION =
  'Caution: a fitted model holds only within the range of the data it was fitted to. Verify it before using it for control, protection or safety decisions, and follow your site\'s procedures and the applicable codes.'

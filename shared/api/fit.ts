/**
 * The fit result JSON: what `pewter fit --json` prints, what a run stores, what results pages read.
 * The fields named by the fitting issue come first; the rest are diagnostics the pages draw.
 * Values are in each symbol's declared (sheet) units; `null` stands for "not available" (JSON has no NaN).
 */
import { z } from 'zod'

const num = z.number()
const numOrNull = z.number().nullable()

/**
 * The optimiser's outcome (not the run's lifecycle, shared/api/runs.ts):
 * - converged: a convergence test passed (`convergedBy` says which);
 * - iteration-limit: stopped at the iteration (Nelder–Mead: evaluation) limit before any test passed;
 * - time-budget: stopped when the time budget ran out;
 * - stalled: no trial step lowered the cost any more although no test passed (Levenberg–Marquardt
 *   after 40 rejected steps or λ ≥ 1e30): often the cost is only known to the integration accuracy;
 * - failed: the model could not be evaluated (the engine's message is kept in `reason`);
 * - aborted: cancelled by the caller.
 */
export const fitStatus = z.enum(['converged', 'iteration-limit', 'time-budget', 'stalled', 'failed', 'aborted'])
export type FitStatus = z.infer<typeof fitStatus>

/** Which test declared convergence: scaled projected gradient, relative step, relative cost change. */
export const convergenceTest = z.enum(['gradient', 'step', 'cost-change'])
export type ConvergenceTest = z.infer<typeof convergenceTest>

/** Words for each outcome, shared by the CLI, the pages, the report and the exports. */
export const FIT_STATUS_WORDS: Record<FitStatus, string> = {
  'converged': 'converged',
  'iteration-limit': 'stopped at the iteration limit',
  'time-budget': 'stopped at the time budget',
  'stalled': 'stalled (no further decrease)',
  'failed': 'failed',
  'aborted': 'aborted',
}
export const CONVERGENCE_TEST_WORDS: Record<ConvergenceTest, string> = {
  'gradient': 'gradient test',
  'step': 'step-size test',
  'cost-change': 'cost-change test',
}

/** "converged (gradient test)", "stopped at the iteration limit", … */
export function describeOutcome(status: string, convergedBy?: string | null): string {
  const words = FIT_STATUS_WORDS[status as FitStatus] ?? status
  const test = convergedBy ? CONVERGENCE_TEST_WORDS[convergedBy as ConvergenceTest] : undefined
  return status === 'converged' && test ? `${words} (${test})` : words
}

export const fitMethod = z.enum(['lm', 'nelder-mead'])
export type FitMethod = z.infer<typeof fitMethod>

export const fitWeighting = z.enum(['sheet', 'equal', 'normalized', 'ml'])
export type FitWeighting = z.infer<typeof fitWeighting>

export const estimateRow = z.object({
  name: z.string(),
  /** experiment index for a local parameter or an initial state; null when shared by all */
  experiment: z.number().int().nullable(),
  unit: z.string(),
  value: num,
  start: num,
  stdError: numOrNull,
  ci95: z.tuple([numOrNull, numOrNull]),
  lower: num,
  upper: num,
  atBound: z.enum(['lower', 'upper']).nullable(),
  /** profile-likelihood 95 % interval, when requested */
  profileCi95: z.tuple([numOrNull, numOrNull]).optional(),
  logTransformed: z.boolean(),
  /** false when the parameter has a component in the null space of the scaled Jacobian: no s.e., no interval */
  determined: z.boolean(),
})
export type EstimateRow = z.infer<typeof estimateRow>

export const residualDiagnostics = z.object({
  n: z.number().int(),
  maxLag: z.number().int(),
  band95: num,
  autocorrelation: z.array(num),
  ljungBox: z.object({ q: num, lags: z.number().int(), pValue: num }),
  crossCorrelation: z.array(z.object({ input: z.string(), lags: z.array(z.number().int()), values: z.array(num) })),
  /** median spacing of the samples in the sheet's time unit: lag k is k·sampleStep (absent on older runs) */
  sampleStep: num.optional(),
  timeUnit: z.string().optional(),
  /** cumulative periodogram (frequency in cycles per sheet time unit, thinned for plotting) and its KS test */
  periodogram: z.object({
    frequency: z.array(num), cumulative: z.array(num), q: z.number().int(), band: num, d: num, pValue: num,
  }).nullable().optional(),
  /** Jarque–Bera test of normality */
  normality: z.object({ test: z.literal('jarque-bera'), statistic: num, pValue: num, skewness: num, kurtosis: num }).nullable().optional(),
  /** independence from each input: N Σ_{τ=0..L} r_ue(τ)² against χ²(L + 1) */
  independence: z.array(z.object({ input: z.string(), statistic: num, dof: z.number().int(), pValue: num })).optional(),
})
export type ResidualDiagnostics = z.infer<typeof residualDiagnostics>

export const outputRow = z.object({
  name: z.string(),
  experiment: z.number().int(),
  experimentName: z.string(),
  validation: z.boolean(),
  n: z.number().int(),
  nrmse: numOrNull,
  rmse: numOrNull,
  r2: numOrNull,
  /** weight used (declared units⁻²) and, for ml weighting, the estimated noise standard deviation */
  weight: numOrNull,
  sigmaEstimate: numOrNull,
  residuals: residualDiagnostics.nullable(),
})
export type OutputRow = z.infer<typeof outputRow>

export const startRow = z.object({
  index: z.number().int(),
  start: z.array(num),
  value: z.array(numOrNull),
  sse: numOrNull,
  status: fitStatus,
  convergedBy: convergenceTest.nullable(),
  reason: z.string(),
  iterations: z.number().int(),
  simulations: z.number().int(),
})
export type StartRow = z.infer<typeof startRow>

const landscapeAxis = z.object({ name: z.string(), experiment: z.number().int().nullable(), values: z.array(num), log: z.boolean() })

export const landscapeResult = z.object({
  x: landscapeAxis,
  y: landscapeAxis,
  /** cost[iy][ix]; null where the model could not be evaluated */
  cost: z.array(z.array(numOrNull)),
  start: z.tuple([num, num]),
  estimate: z.tuple([num, num]),
})
export type LandscapeResult = z.infer<typeof landscapeResult>

export const equationErrorRow = z.object({
  parameters: z.array(z.object({ name: z.string(), value: num, stdError: numOrNull })),
  sse: numOrNull,
  note: z.string(),
})
export type EquationErrorRow = z.infer<typeof equationErrorRow>

export const identifiability = z.object({
  /** the documented cutoff on σ_k/σ_1 of the unit-column-scaled Jacobian (log coordinates for positive quantities) */
  cutoff: num,
  /** σ_k/σ_1, descending, over the quantities not held at a bound */
  relativeSingularValues: z.array(num),
  rank: z.number().int(),
  /** quantities with a component in the null space: "not determined by these data" */
  undetermined: z.array(z.string()),
  /** the combinations that are determined, e.g. "a·b is determined; a and b separately are not" */
  combinations: z.array(z.string()),
  advice: z.string().nullable(),
})
export type Identifiability = z.infer<typeof identifiability>

export const validationStartRow = z.object({
  experiment: z.string(),
  name: z.string(),
  unit: z.string(),
  value: num,
})
/** How a multiple-shooting fit went before its single-shooting polish (absent for single shooting). */
export const multipleShootingInfo = z.object({
  /** segments over all experiments */
  segments: z.number().int(),
  /** per fit experiment: the times (sheet time unit) where segments after the first begin */
  experiments: z.array(z.object({ experiment: z.number().int(), name: z.string(), boundaries: z.array(num) })),
  secondsPerTimeUnit: num,
  /** largest continuity defect at the end, each state's defect divided by its typical magnitude */
  defect: numOrNull,
  defectTolerance: num,
  /** the defect is at or below the tolerance */
  continuous: z.boolean(),
  penaltyRounds: z.number().int(),
  iterations: z.number().int(),
  /** segment simulations of every start (each segment counts once) */
  simulations: z.number().int(),
  /** weighted output cost over the segments at the end, and simulated in one piece from there */
  segmentCost: numOrNull,
  singleShootingCostAtEstimate: numOrNull,
  reason: z.string(),
})
export type MultipleShootingInfo = z.infer<typeof multipleShootingInfo>

export const fitResult = z.object({
  /** the optimiser's outcome at the best start */
  status: fitStatus,
  /** for `converged`: which test passed */
  convergedBy: convergenceTest.nullable(),
  reason: z.string(),
  /** 1-based start the reason belongs to (a failed fit: the start whose engine message is kept) */
  reasonStart: z.number().int().nullable(),
  /** the weighted cost: Σ over experiments, outputs and samples of w·(y − ŷ)² */
  sse: numOrNull,
  iterations: z.number().int(),
  simulations: z.number().int(),
  /** the estimation alone, ms */
  elapsedMs: num,
  parameters: z.array(estimateRow),
  initialStates: z.array(estimateRow),
  outputs: z.array(outputRow),
  /** correlation of every estimated quantity (parameters then initial states); null where undefined */
  correlation: z.object({ names: z.array(z.string()), matrix: z.array(z.array(numOrNull)) }),
  warnings: z.array(z.string()),
  /** information lines that are not warnings (e.g. strongly correlated pairs, with r) */
  notes: z.array(z.string()),
  identifiability: identifiability.nullable(),
  /** how validation experiments started: the sheet's initial states, or initial states estimated on the record (parameters frozen) */
  validationStart: z.enum(['sheet', 'estimated']).nullable(),
  validationInitialStates: z.array(validationStartRow),
  // --- extra fields ---
  method: fitMethod,
  weighting: fitWeighting,
  nObservations: z.number().int(),
  nEstimated: z.number().int(),
  dof: z.number().int(),
  s2: numOrNull,
  tQuantile: numOrNull,
  aic: numOrNull,
  bic: numOrNull,
  costHistory: z.array(num),
  starts: z.array(startRow),
  bestStart: z.number().int(),
  tolerances: z.object({ rtol: num, atol: num, ftol: num, xtol: num, gtol: num }),
  landscape: landscapeResult.nullable(),
  equationError: equationErrorRow.nullable(),
  cautions: z.array(z.string()),
  /** present when the fit used multiple shooting */
  multipleShooting: multipleShootingInfo.optional(),
  /** present when the fit was stopped by request after some starts finished: the result is their best */
  stoppedEarly: z.object({ finishedStarts: z.number().int(), plannedStarts: z.number().int() }).optional(),
})
export type FitResult = z.infer<typeof fitResult>

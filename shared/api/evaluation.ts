/**
 * An evaluation run: a calibrated model simulated on records with nothing free (validation on fresh
 * data). Its result has the per-output figures and residual checks of a fit (shared/api/fit.ts) but no
 * estimates: the parameter values it ran with and where they came from.
 */
import { z } from 'zod'
import { outputRow, validationStartRow } from './fit'

export const evaluationSource = z.enum(['sheet', 'parameter-set', 'run'])
export type EvaluationSource = z.infer<typeof evaluationSource>

export const evaluationResult = z.object({
  kind: z.literal('evaluation'),
  /** every parameter of the sheet with the value simulated with (declared unit) and its origin */
  parameters: z.array(z.object({ name: z.string(), unit: z.string(), value: z.number(), source: evaluationSource })),
  /** records started from the sheet's initial state, or from initial states estimated on each (parameters frozen) */
  start: z.enum(['sheet', 'estimated']),
  initialStates: z.array(validationStartRow),
  outputs: z.array(outputRow),
  warnings: z.array(z.string()),
  cautions: z.array(z.string()),
  simulations: z.number().int(),
  elapsedMs: z.number(),
})
export type EvaluationResult = z.infer<typeof evaluationResult>

export const EVALUATION_CAUTIONS = [
  'An evaluation shows how this calibrated model matches these records only; a good match here does not extend the model beyond the range of the data it was fitted and evaluated on.',
]

/**
 * Hand-over of a calibrated model: operating points, linearisation, responses and exports. The same
 * JSON comes from `pewter linearize --json`, the API and the model and run pages. Values are in the
 * sheet's declared units (deviation variables for A, B, C, D); time in the sheet's time unit; `null`
 * stands for "not defined" (JSON has no NaN or infinity).
 */
import { z } from 'zod'

const num = z.number()
const numOrNull = z.number().nullable()
const matrix = z.array(z.array(num))
const complex = z.object({ re: num, im: num })

export const exportFormats = ['js', 'c', 'fmu', 'ss-json', 'ss-csv'] as const
export const exportFormat = z.enum(exportFormats)
export type ExportFormat = z.infer<typeof exportFormat>

/** Where the parameter values come from. */
export const parameterSource = z.discriminatedUnion('kind', [
  z.object({ kind: z.literal('sheet') }),
  z.object({ kind: z.literal('run'), runId: z.number().int().positive() }),
  z.object({ kind: z.literal('parameter-set'), parameterSetId: z.number().int().positive() }),
])
export type ParameterSource = z.infer<typeof parameterSource>

const nameValue = z.record(z.string().regex(/^[A-Za-z_][A-Za-z0-9_]*$/, 'a symbol name'), z.number().refine(Number.isFinite, 'a finite number'))

/** Body of POST …/models/:mid/versions/:n/linearize and …/export (values in declared units). */
export const handoverBody = z.object({
  source: parameterSource.default({ kind: 'sheet' }),
  /** parameter values overriding the source */
  set: nameValue.default({}),
  /** constant input values (default: the sheet's) */
  inputs: nameValue.default({}),
  /** 'steady': at an operating point; a number: at that time of a simulation from the sheet's initial states */
  at: z.union([z.literal('steady'), z.number().nonnegative()]).default('steady'),
  /** number of log-spaced frequencies (0: no frequency response) */
  frequencies: z.number().int().min(0).max(2000).default(200),
  /** step responses of the linear and the nonlinear model */
  steps: z.boolean().default(true),
})
export type HandoverBody = z.infer<typeof handoverBody>

export const exportBody = handoverBody.extend({ format: exportFormat })
export type ExportBody = z.infer<typeof exportBody>

export const poleRow = z.object({
  re: num,
  im: num,
  timeConstant: numOrNull,
  naturalFrequency: numOrNull,
  damping: numOrNull,
  stable: z.boolean(),
  /** first-order standard deviations from the fit's covariance */
  sdRe: numOrNull,
  sdIm: numOrNull,
})

export const operatingPointReply = z.object({
  status: z.enum(['unique', 'several', 'none']),
  solutions: z.array(z.object({ x: z.array(num), stable: z.boolean().nullable(), residual: num, method: z.enum(['newton', 'continuation', 'input-continuation']) })),
  starts: z.number().int(),
  messages: z.array(z.string()),
})

export const linearAnalysis = z.object({
  title: z.string(),
  kind: z.enum(['continuous', 'discrete']),
  sampleTime: numOrNull,
  states: z.array(z.string()),
  inputs: z.array(z.string()),
  outputs: z.array(z.string()),
  units: z.object({ time: z.string(), states: z.array(z.string()), inputs: z.array(z.string()), outputs: z.array(z.string()) }),
  /** where the model was linearised */
  at: z.union([z.object({ kind: z.literal('steady'), operatingPoint: operatingPointReply }), z.object({ kind: z.literal('time'), t: num })]),
  x: z.array(num),
  u: z.array(num),
  y: z.array(num),
  /** f(x, u) at the point: zero at an operating point */
  drift: z.array(num),
  parameters: z.array(z.object({ name: z.string(), unit: z.string(), value: num })),
  provenance: z.string(),
  A: matrix,
  B: matrix,
  C: matrix,
  D: matrix,
  poles: z.array(poleRow),
  /** zeros of each input–output channel */
  zeros: z.array(z.object({ input: z.string(), output: z.string(), relativeDegree: z.number().int().nullable(), zeros: z.array(complex).nullable() })),
  /**
   * invariant zeros of the whole system: finite s where the pencil [A − sI, B; C, D] loses rank below
   * its normal rank (null when they could not be computed, with a warning)
   */
  systemZeros: z.object({ zeros: z.array(complex), normalRank: z.number().int(), rows: z.number().int(), columns: z.number().int(), tolerance: num }).nullable(),
  dcGain: z.array(z.array(numOrNull)).nullable(),
  dcGainSd: z.array(z.array(numOrNull)).nullable(),
  controllability: z.object({ rank: z.number().int(), n: z.number().int(), tolerance: num }),
  observability: z.object({ rank: z.number().int(), n: z.number().int(), tolerance: num }),
  delays: z.array(z.object({ input: z.string(), tau: num })),
  uncertainty: z.object({ parameters: z.array(z.string()), method: z.string() }).nullable(),
  frequencyResponse: z.object({
    omega: z.array(num),
    channels: z.array(z.object({
      input: z.string(), output: z.string(),
      magnitude: z.array(numOrNull), magnitudeDb: z.array(numOrNull), phaseDeg: z.array(numOrNull),
      magnitudeDbSd: z.array(numOrNull).nullable(), phaseDegSd: z.array(numOrNull).nullable(),
    })),
  }).nullable(),
  stepResponses: z.array(z.object({
    input: z.string(), size: num, t: z.array(num),
    /** per output: the linear model's response */
    linear: z.array(z.array(numOrNull)),
    /** per output: the nonlinear simulation from the same point (null when it failed) */
    nonlinear: z.array(z.array(numOrNull)).nullable(),
  })).nullable(),
  warnings: z.array(z.string()),
  cautions: z.array(z.string()),
})
export type LinearAnalysis = z.infer<typeof linearAnalysis>

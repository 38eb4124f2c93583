/**
 * Cutting a record into shooting segments, and a default segment count.
 *
 * A segment starts at a sample (its first sample's time is the node where its initial state is an
 * unknown) and runs to the next segment's first sample, where the continuity defect is taken. The
 * first segment starts at the experiment's t0 with the ordinary initial state.
 *
 * Default length: about twice the fastest time constant estimated from the model's state Jacobian at
 * its start (1/‖∂f/∂x‖_F, a lower bound of the fastest time constant's reciprocal rate), so that a
 * segment spans a fraction of an oscillation period or of an unstable mode's doubling time — short
 * enough that a poor start cannot drift far inside one segment, long enough that each segment holds
 * several samples. Common practice, no source; the rule of thumb of choosing segments over which the
 * model "cannot run away" is that of H. G. Bock, "Recent advances in parameter identification
 * techniques for O.D.E.", in P. Deuflhard & E. Hairer (eds.), Numerical Treatment of Inverse Problems in
 * Differential and Integral Equations, Birkhäuser (1983) 95–121.
 */
import type { CompiledModel } from '../../../sheet/compiled'
import { FitInputError } from '../errors'

export interface SegmentRequest {
  /** segments per experiment */
  segments?: number
  /** segment length in the sheet's time unit (used when `segments` is not given) */
  segmentLength?: number
}

/** Fewest samples a segment may hold. */
export const MIN_SAMPLES_PER_SEGMENT = 2

/** First sample index of each segment: `count` segments of (nearly) equal sample counts. */
export function evenSegmentStarts(nSamples: number, count: number): Int32Array {
  const starts = new Int32Array(count)
  for (let i = 0; i < count; i++) starts[i] = Math.round((i * nSamples) / count)
  return starts
}

/**
 * Segment starts for one experiment (sample times `tOut`, in the sheet's time unit). Throws a
 * FitInputError naming the experiment when the record is too short for the request.
 */
export function segmentStarts(tOut: Float64Array, req: SegmentRequest, experiment: string): Int32Array {
  const n = tOut.length
  let count: number
  if (req.segments !== undefined) {
    if (!Number.isInteger(req.segments) || req.segments < 1) {
      throw new FitInputError(`--segments: a whole number of at least 1 (got ${req.segments})`, { kind: 'argument' })
    }
    count = req.segments
  } else if (req.segmentLength !== undefined) {
    if (!(req.segmentLength > 0) || !Number.isFinite(req.segmentLength)) {
      throw new FitInputError(`--segment-length: a positive time in the sheet's time unit (got ${req.segmentLength})`, { kind: 'argument' })
    }
    const span = n > 1 ? tOut[n - 1] - tOut[0] : 0
    count = Math.max(1, Math.round(span / req.segmentLength))
  } else {
    count = 1
  }
  const most = Math.floor(n / MIN_SAMPLES_PER_SEGMENT)
  if (count > most) {
    throw new FitInputError(
      `${n} samples allow at most ${most} segments (each needs ${MIN_SAMPLES_PER_SEGMENT} samples); asked for ${count}`,
      { kind: 'argument', file: experiment },
    )
  }
  return evenSegmentStarts(n, count)
}

/**
 * A default segment count for a record of `span` (sheet time unit) with `nSamples` samples: about
 * span / (2·τ) with τ = 1/‖∂f/∂x‖_F at the sheet's initial state, parameter values and input values,
 * kept to at least 4 samples per segment and at most 50 segments. 1 when the model gives no time scale.
 */
export function suggestSegments(model: CompiledModel, span: number, nSamples: number): number {
  if (model.kind !== 'continuous' || model.nx === 0 || !(span > 0)) return 1
  const x = Float64Array.from(model.states, (s) => s.initial)
  const p = Float64Array.from(model.params, (q) => q.value)
  const u = new Float64Array(model.nu + model.nd)
  model.inputs.forEach((inp, i) => (u[i] = inp.value))
  model.delays.forEach((d, k) => (u[model.nu + k] = model.inputs[d.input].value))
  const a = new Float64Array(model.nx * model.nx)
  try {
    model.dfdx(0, x, p, u, a)
  } catch {
    return 1
  }
  let f = 0
  for (let i = 0; i < a.length; i++) f += a[i] * a[i]
  f = Math.sqrt(f)
  if (!(f > 0) || !Number.isFinite(f)) return 1
  const tau = 1 / f
  const byTime = Math.round(span / (2 * tau))
  return Math.max(1, Math.min(50, Math.floor(nSamples / 4), byTime))
}

/**
 * What passes between a multiple-shooting fit and the helper lanes a host offers it (evaluator.ts):
 * the problem's shape, one block of an evaluation out, its rows back, and the host's lane set. Plain
 * data types only, so the fit options, the segmented problem and the evaluator can all name them.
 */

/** The shape a helper's problem must have to serve a fit (checked once a helper is up). */
export interface SegmentShape {
  n: number
  m: number
  segments: number
}

/** One block of one evaluation, fit thread → helper. */
export interface SegmentBatch {
  /** evaluation number: a reply to an older evaluation is dropped */
  id: number
  w: Float64Array
  mu: number
  lambda: Float64Array
  stateScale: Float64Array
  withJac: boolean
  /** segment indices of this block */
  segments: Int32Array
}

/**
 * A block's rows, helper → fit thread (the arrays are transferable). Rows and Jacobian columns are
 * implicit: segment by segment (the batch's order), its output rows then its defect rows; per row the
 * columns a segment can touch (the parameters, its own initial state, its successor's).
 */
export interface SegmentRows {
  id: number
  ok: boolean
  /** the engine's message when a segment could not be simulated */
  error: string | null
  /** the fit's time budget ran out or the helper was stopped inside a simulation */
  interrupted: 'aborted' | 'time-budget' | null
  simulations: number
  r: Float64Array
  /** scaled defect per row (NaN on output rows) */
  defects: Float64Array
  /** with the Jacobian: each row's entries in its segment's columns */
  jac: Float64Array | null
}

/** Helper lanes offered by the host for one fit. */
export interface SegmentEvaluator {
  /** helpers up and checked so far (lanes 0 … ready − 1); an evaluation uses these and the fit's thread */
  readonly ready: number
  /** helpers still starting for this fit: while any is, the fit yields to the event loop once per evaluation to hear from them */
  readonly starting: number
  evaluate(lane: number, batch: SegmentBatch): Promise<SegmentRows>
  close(): Promise<void>
}

/** The host's factory, called once the fit knows its segment count; null: evaluate in the fit's thread. */
export type SegmentEvaluatorFactory = (fit: { segments: number; shape: SegmentShape; deadline: number | undefined }) => SegmentEvaluator | null

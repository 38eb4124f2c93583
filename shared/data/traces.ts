/**
 * The shape of measured data as the engine consumes it: input traces and one experiment's samples.
 * Defined here, below the engine, so that the CSV readers produce it without importing the engine.
 */

/** A measured input signal: sample times (strictly increasing) and values. */
export interface InputTrace {
  t: Float64Array
  v: Float64Array
}

export interface ExperimentData {
  name: string
  /** file name or dataset name, for error messages */
  source?: string
  /** sample times in the sheet's time unit, strictly increasing */
  time: Float64Array
  /** measured outputs by output name, internal units, NaN where the cell was empty */
  outputs: Record<string, Float64Array>
  /** input traces by input name (internal units, time in the sheet's unit) */
  inputs: Record<string, InputTrace>
  /** start of the simulation (sheet time unit); default 0, the dataset's time origin */
  t0?: number
  /** 1-based data row of each sample, for messages (default: index + 2, after a header row) */
  rows?: Int32Array
}

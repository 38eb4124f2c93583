// Types of odex-lib.js, from the declaration generated out of the odex package (types/odex.d.ts).
export { Solver, Outcome } from './types/odex'
export type { Derivative, OutputFunction } from './types/odex'

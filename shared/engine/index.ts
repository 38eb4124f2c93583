/** The simulation engine: `simulate(model, request)`, its solvers, inputs and typed errors. */
export { simulate, DEFAULT_RTOL, DEFAULT_MAX_STEPS } from './simulate'
export * from './simulate-contract'
export * from './errors'
export { InputSet } from './inputs'
export { solveSteady, steadyIndices } from './steady'
export { ModelSystem, type SensSpec } from './system'
export * from './solvers'

// Re-export of the odex package (E. Hairer's ODEX extrapolation code, ported by C. Smith).
// Plain JavaScript on purpose: TypeScript reads the types from odex-lib.d.ts instead of the
// package's own source, which does not type-check under strict (skipLibCheck covers only .d.ts files, not a package's .ts source).
export { Solver, Outcome } from 'odex'

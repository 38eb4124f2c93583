/**
 * Sheets used by the library tests. Invented examples in the Tinmoor Works scenario (a fictional
 * plant); the numbers are made up for the tests, not measured.
 */
import { readFileSync } from 'node:fs'
import { join } from 'node:path'
import { MODELS_DIR } from '../../fixtures/sheet/templates'
export const drainSheet = `# Invented example: a buffer vessel draining through an orifice (Tinmoor Works, fictional)
model "Draining buffer vessel"
time [s]
input q_in = 1e-3 [m^3/s] linear "feed flow"
param A = 1.5 [m^2] fixed "cross-section"
param k = 2e-3 [m^2.5/s] in [1e-4, 1e-1] "outlet coefficient"
state h = 0.5 [m] "level"
dh/dt = (q_in - k * sqrt(max(h, 0))) / A
output level = h [m] sigma 0.01
`

/** The same sheet, edited: k gets a new value and bounds, A changes unit, a heat-loss parameter is added. */
export const drainSheetV2 = `# Invented example: a buffer vessel draining through an orifice (Tinmoor Works, fictional)
model "Draining buffer vessel"
time [s]
input q_in = 1e-3 [m^3/s] linear "feed flow"
param A = 15000 [cm^2] fixed "cross-section"
param k = 3e-3 [m^2.5/s] in [1e-4, 5e-2] "outlet coefficient"
param leak = 1e-5 [m^3/s] in [0, 1e-3] "leak flow"
state h = 0.5 [m] "level"
dh/dt = (q_in - leak - k * sqrt(max(h, 0))) / A
output level = h [m] sigma 0.01
`

/** A sheet whose derivative uses an undeclared name on line 8 (columns 7-12: `q_inn`). */
export const drainSheetWithError = drainSheet.replace('(q_in - k', '(q_inn - k')

/** A small first-order lag, used where any clean sheet will do. */
export const lagSheet = `# Invented example: first-order lag of a temperature probe (Tinmoor Works, fictional)
model "Probe lag"
time [s]
input T_in = 290 [K] linear "process temperature"
param tau = 12 [s] in [0.5, 120] "probe time constant"
state T = 290 [K] "probe reading"
dT/dt = (T_in - T) / tau
output reading = T [K]
`

const PARTS = join(MODELS_DIR, 'parts')
/** The library's gravity tank part template, version 1 (models/parts). */
export const partTank = readFileSync(join(PARTS, 'gravity-tank@1.sheet'), 'utf8')
/** The tank cascade template with its tank parts pinned to `slug@v` instead of gravity-tank@1. */
export const cascadeOf = (slug: string, v: number) => readFileSync(join(PARTS, 'tank-cascade.sheet'), 'utf8').replaceAll('gravity-tank@1', `${slug}@${v}`)

/** Small sheets with known linear behaviour, for the hand-over tests. */

/** linear in states and inputs: its A, B, C, D are the coefficients written here */
export const LINEAR = `model "Two-state linear plant"
time [s]
input u1 = 0.5
input u2 = -1
param a11 = -2
param a12 = 0.5
param a21 = 0.25
param a22 = -3
state x1 = 0
state x2 = 0
dx1/dt = a11 * x1 + a12 * x2 + 1.5 * u1
dx2/dt = a21 * x1 + a22 * x2 + 0.7 * u2 - 0.2 * u1
output y1 = x1 + 0.1 * u1
output y2 = 2 * x2 - x1 + 0.3 * u2
`
export const LINEAR_A = [[-2, 0.5], [0.25, -3]]
export const LINEAR_B = [[1.5, 0], [-0.2, 0.7]]
export const LINEAR_C = [[1, 0], [-1, 2]]
export const LINEAR_D = [[0.1, 0], [0, 0.3]]

/** gravity-drained tank: A dh/dt = q - a sqrt(2 g h) (Torricelli outflow) */
export const TANK = `model "Gravity-drained tank"
time [s]
input  q = 0.002 [m^3/s] "inflow"
param  A = 0.8 [m^2] in [0.1, 5] "cross-section"
param  a = 0.001 [m^2] in [1e-5, 0.1] "outlet area"
const  g = 9.81 [m/s^2]
state  h = 1 [m] in [0, 20] "level"
dh/dt = (q - a * sqrt(2 * g * h)) / A
output level = h [m]
`

/** first-order lag K/(tau s + 1), time in minutes */
export const FIRST_ORDER = `model "First-order lag"
time [min]
input u = 0 [1]
param K = 2.5 [1]
param tau = 4 [min]
state x = 0 [1]
dx/dt = (K * u - x) / tau
output y = x [1]
`

/** second-order lag K wn^2 / (s^2 + 2 zeta wn s + wn^2) */
export const SECOND_ORDER = `model "Second-order lag"
time [s]
input u = 0
param K = 1.7
param wn = 3 [1/s]
param zeta = 0.2
state x1 = 0
state x2 = 0
dx1/dt = x2
dx2/dt = -wn^2 * x1 - 2 * zeta * wn * x2 + K * wn^2 * u
output y = x1
`

/** three equilibria x = 1, 2, 3 (stable, unstable, stable) inside the bounds */
export const THREE_ROOTS = `model "Three equilibria"
time [s]
input u = 0
state x = 0.5 in [0, 4]
dx/dt = -(x - 1) * (x - 2) * (x - 3) + u
output y = x
`

/** x' = 1 + x^2 has no real equilibrium */
export const NO_ROOT = `model "No equilibrium"
time [s]
input u = 1
state x = 0
dx/dt = u + x^2
output y = x
`

/**
 * x' = u − x (x − 2)²: for u above the local maximum 32/27 of x (x − 2)² (at x = 2/3) the only
 * equilibrium lies right of x = 2; at u = 3 it is x = 3 exactly (3·1² = 3). The start x = 2 is where
 * ∂f/∂x = −(3x² − 8x + 4) vanishes: Newton's first step from it is undefined.
 */
export const FOLD_START = `model "Start beyond a fold"
time [s]
input u = 0.5
state x = 2
dx/dt = u - x * (x - 2)^2
output y = x
`

/** The sheet a model "from a blank sheet" starts with: the smallest sheet that checks clean (a first-order lag). */
export function blankSheet(title: string): string {
  return `# Describe the physics and the assumptions here.
model ${JSON.stringify(title.replace(/"/g, "'"))}
time [s]
input  u = 1 [1] hold "input signal"
param  k = 1 [1] in [0.01, 100] "gain"
param  tau = 10 [s] in [0.1, 1000] "time constant"
state  x = 0 [1] "state"
dx/dt = (k * u - x) / tau
output y = x [1]
`
}

import { readFileSync, readdirSync } from 'node:fs'
import { compileModel } from '../shared/sheet/index'
for (const f of readdirSync('models')) {
  const c = compileModel(readFileSync('models/' + f, 'utf8'))
  const x = Float64Array.from(c.states.map((s) => s.initial))
  const p = Float64Array.from(c.params.map((s) => s.value))
  const u = new Float64Array(c.nu + c.nd)
  c.inputs.forEach((s, i) => (u[i] = s.value))
  c.delays.forEach((d, k) => (u[c.nu + k] = u[d.input]))
  const horizon = c.timeUnit === 'h' ? 24 : 3600
  const N = 200000
  const dt = c.kind === 'discrete' ? c.sampleTime! : horizon / N
  const steps = c.kind === 'discrete' ? 360 : N
  const k1 = new Float64Array(c.nx), k2 = new Float64Array(c.nx), k3 = new Float64Array(c.nx), k4 = new Float64Array(c.nx), tmp = new Float64Array(c.nx)
  let t = 0
  for (let s = 0; s < steps; s++) {
    if (c.kind === 'discrete') { c.rhs(t, x, p, u, k1); x.set(k1); t += dt; continue }
    c.rhs(t, x, p, u, k1)
    for (let i = 0; i < c.nx; i++) tmp[i] = x[i] + 0.5 * dt * k1[i]
    c.rhs(t + dt / 2, tmp, p, u, k2)
    for (let i = 0; i < c.nx; i++) tmp[i] = x[i] + 0.5 * dt * k2[i]
    c.rhs(t + dt / 2, tmp, p, u, k3)
    for (let i = 0; i < c.nx; i++) tmp[i] = x[i] + dt * k3[i]
    c.rhs(t + dt, tmp, p, u, k4)
    for (let i = 0; i < c.nx; i++) x[i] += (dt / 6) * (k1[i] + 2 * k2[i] + 2 * k3[i] + k4[i])
    t += dt
  }
  const y = new Float64Array(c.ny)
  c.outputsFn(t, x, p, u, y)
  console.log(f, 't=', t, 'x0', c.states.map((s) => s.name + '=' + (s.initial).toPrecision(4)).join(' '), '\n   x', c.states.map((s, i) => s.name + '=' + x[i].toPrecision(5)).join(' '), ' y', Array.from(y).map((v) => v.toPrecision(5)).join(' '))
}

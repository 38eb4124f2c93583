/**
 * Builds a CompiledModel from plain JavaScript functions, for engine tests independent of the sheet
 * compiler. Jacobians not given are central finite differences (step 1e-6·max(1,|v|)); the tests
 * that check sensitivities give them exactly. The coupling term d2f, when not given, is a central
 * difference of the directional derivative J·s + ∂f/∂p·q + ∂f/∂u·r along (v, τ, ν) (relative step
 * 1e-6; common practice, no source).
 */
import type { CompiledModel, VecFn } from '../../../shared/sheet/compiled'

export interface TestModelSpec {
  title?: string
  kind?: 'continuous' | 'discrete'
  sampleTime?: number
  secondsPerTimeUnit?: number
  states: { name: string; initial: number; steady?: boolean; estimate?: boolean }[]
  params?: { name: string; value: number }[]
  inputs?: { name: string; value: number; interp?: 'linear' | 'hold' }[]
  delays?: { input: number; param: number | null; constValue?: number }[]
  outputs?: { name: string }[]
  rhs: VecFn
  outputsFn?: VecFn
  dfdx?: VecFn
  dfdp?: VecFn
  dfdu?: VecFn
  dfdt?: VecFn
  dgdx?: VecFn
  dgdp?: VecFn
  dgdu?: VecFn
  d2f?: VecFn
}

type Which = 'x' | 'p' | 'u' | 't'

function fdJac(fn: VecFn, nOut: number, which: Which, nIn: number): VecFn {
  const a = new Float64Array(Math.max(nOut, 1))
  const b = new Float64Array(Math.max(nOut, 1))
  return (t, x, p, u, out) => {
    if (which === 't') {
      const h = 1e-6 * Math.max(1, Math.abs(t))
      fn(t + h, x, p, u, a)
      fn(t - h, x, p, u, b)
      for (let i = 0; i < nOut; i++) out[i] = (a[i] - b[i]) / (2 * h)
      return
    }
    const v = which === 'x' ? Float64Array.from(x.subarray(0, nIn)) : which === 'p' ? Float64Array.from(p) : Float64Array.from(u)
    for (let j = 0; j < nIn; j++) {
      const h = 1e-6 * Math.max(1, Math.abs(v[j]))
      const v0 = v[j]
      v[j] = v0 + h
      call(fn, which, t, x, p, u, v, a)
      v[j] = v0 - h
      call(fn, which, t, x, p, u, v, b)
      v[j] = v0
      for (let i = 0; i < nOut; i++) out[i * nIn + j] = (a[i] - b[i]) / (2 * h)
    }
  }
}

function call(fn: VecFn, which: Which, t: number, x: Float64Array, p: Float64Array, u: Float64Array, v: Float64Array, out: Float64Array): void {
  if (which === 'x') fn(t, v, p, u, out)
  else if (which === 'p') fn(t, x, v, u, out)
  else fn(t, x, p, v, out)
}

/** d2f (compiled.ts: packed X = [x, s, v, τ], P = [p, q], U = [u, r, ν]) by a central difference */
function fdCoupling(nx: number, np: number, nuu: number, dfdx: VecFn, dfdp: VecFn, dfdu: VecFn): VecFn {
  const J = new Float64Array(Math.max(1, nx * nx))
  const Fp = new Float64Array(Math.max(1, nx * np))
  const Fu = new Float64Array(Math.max(1, nx * nuu))
  const xs = new Float64Array(nx)
  const us = new Float64Array(Math.max(1, nuu))
  const a = new Float64Array(nx)
  const b = new Float64Array(nx)
  const p = new Float64Array(np)
  const dirDerivative = (t: number, X: Float64Array, P: Float64Array, U: Float64Array, out: Float64Array) => {
    dfdx(t, xs, p, us, J)
    if (np) dfdp(t, xs, p, us, Fp)
    if (nuu) dfdu(t, xs, p, us, Fu)
    for (let i = 0; i < nx; i++) {
      let acc = 0
      for (let k = 0; k < nx; k++) acc += J[i * nx + k] * X[nx + k]
      for (let k = 0; k < np; k++) acc += Fp[i * np + k] * P[np + k]
      for (let k = 0; k < nuu; k++) acc += Fu[i * nuu + k] * U[nuu + k]
      out[i] = acc
    }
  }
  return (t, X, P, U, out) => {
    for (let k = 0; k < np; k++) p[k] = P[k]
    let scale = Math.abs(X[3 * nx]) / (1 + Math.abs(t))
    for (let i = 0; i < nx; i++) scale = Math.max(scale, Math.abs(X[2 * nx + i]) / (1 + Math.abs(X[i])))
    for (let k = 0; k < nuu; k++) scale = Math.max(scale, Math.abs(U[2 * nuu + k]) / (1 + Math.abs(U[k])))
    if (scale === 0) {
      out.fill(0, 0, nx)
      return
    }
    const h = 1e-6 / scale
    for (const [sign, dst] of [[1, a], [-1, b]] as const) {
      for (let i = 0; i < nx; i++) xs[i] = X[i] + sign * h * X[2 * nx + i]
      for (let k = 0; k < nuu; k++) us[k] = U[k] + sign * h * U[2 * nuu + k]
      dirDerivative(t + sign * h * X[3 * nx], X, P, U, dst)
    }
    for (let i = 0; i < nx; i++) out[i] = (a[i] - b[i]) / (2 * h)
  }
}

export function makeModel(spec: TestModelSpec): CompiledModel {
  const nx = spec.states.length
  const params = spec.params ?? []
  const inputs = spec.inputs ?? []
  const delays = spec.delays ?? []
  const np = params.length
  const nu = inputs.length
  const nd = delays.length
  const outputs = spec.outputs ?? spec.states.map((s) => ({ name: s.name }))
  const ny = outputs.length
  const outputsFn: VecFn = spec.outputsFn ?? ((_t, x, _p, _u, out) => {
    for (let i = 0; i < nx; i++) out[i] = x[i]
  })
  const unit = { unit: '', scale: 1, offset: 0 }
  const identity: VecFn = (_t, _x, _p, _u, out) => {
    out.fill(0, 0, ny * nx)
    for (let i = 0; i < nx; i++) out[i * nx + i] = 1
  }
  const zeros = (len: number): VecFn => (_t, _x, _p, _u, out) => {
    out.fill(0, 0, len)
  }
  const dfdx = spec.dfdx ?? fdJac(spec.rhs, nx, 'x', nx)
  const dfdp = spec.dfdp ?? (np ? fdJac(spec.rhs, nx, 'p', np) : zeros(0))
  const dfdu = spec.dfdu ?? (nu + nd ? fdJac(spec.rhs, nx, 'u', nu + nd) : zeros(0))
  return {
    hash: 'test-' + (spec.title ?? 'model'),
    title: spec.title ?? 'test model',
    kind: spec.kind ?? 'continuous',
    timeUnit: 's',
    secondsPerTimeUnit: spec.secondsPerTimeUnit ?? 1,
    sampleTime: spec.sampleTime ?? null,
    states: spec.states.map((s, i) => ({ ...unit, name: s.name, description: '', initial: s.initial, estimate: !!s.estimate, steady: !!s.steady, lower: null, upper: null, line: i + 1 })),
    params: params.map((p, i) => ({ ...unit, name: p.name, description: '', value: p.value, lower: null, upper: null, fixed: false, line: i + 1 })),
    inputs: inputs.map((u, i) => ({ ...unit, name: u.name, description: '', value: u.value, interp: u.interp ?? 'linear', line: i + 1 })),
    outputs: outputs.map((o, i) => ({ ...unit, name: o.name, description: '', sigma: null, line: i + 1 })),
    delays: delays.map((d) => ({ input: d.input, param: d.param, constValue: d.constValue ?? 0 })),
    nx, np, nu, nd, ny,
    rhs: spec.rhs,
    outputsFn,
    dfdx,
    dfdp,
    dfdu,
    dfdt: spec.dfdt ?? zeros(nx),
    dgdx: spec.dgdx ?? (spec.outputsFn ? fdJac(outputsFn, ny, 'x', nx) : identity),
    dgdp: spec.dgdp ?? (spec.outputsFn && np ? fdJac(outputsFn, ny, 'p', np) : zeros(ny * np)),
    dgdu: spec.dgdu ?? (spec.outputsFn && nu + nd ? fdJac(outputsFn, ny, 'u', nu + nd) : zeros(ny * (nu + nd))),
    d2f: spec.d2f ?? fdCoupling(nx, np, nu + nd, dfdx, dfdp, dfdu),
    source: '// hand-built test model',
    modes: [], events: [], nm: 0, ne: 0, modeValues: new Float64Array(0), eventFns: null,
  }
}

export function linspace(a: number, b: number, n: number): Float64Array {
  const out = new Float64Array(n)
  for (let i = 0; i < n; i++) out[i] = a + ((b - a) * i) / (n - 1)
  return out
}

/** x' = −k·x (state x, parameter k) with its Jacobians: the exponential decay x0·e^{−kt} */
export function decayModel(title: string, x0: number, k: number): CompiledModel {
  return makeModel({
    title,
    states: [{ name: 'x', initial: x0 }],
    params: [{ name: 'k', value: k }],
    rhs: (_t, x, p, _u, o) => { o[0] = -p[0] * x[0] },
    dfdx: (_t, _x, p, _u, o) => { o[0] = -p[0] },
    dfdp: (_t, x, _p, _u, o) => { o[0] = -x[0] },
  })
}

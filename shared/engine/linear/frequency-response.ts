/**
 * Frequency response of a linear model: G(jω) = C (jωI − A)⁻¹ B(ω) + D(ω) for continuous models and
 * G(e^(jωTs)) = C (e^(jωTs) I − A)⁻¹ B(ω) + D(ω) for discrete ones (Franklin, Powell & Emami-Naeini,
 * Feedback Control of Dynamic Systems, 7th ed. 2015, Sec. 6.1 and 8.4), where a delayed input channel
 * contributes b·e^(−jωτ). ω in rad per sheet time unit; magnitudes in output unit per input unit (and
 * dB, 20·log10), phases in degrees, unwrapped along ω (starting in (−180°, 180°]).
 */
import type { LinearModel } from './linearize'
import { complexSolve } from './dense'
import type { Eigenvalues } from './eigen'

export interface ChannelResponse {
  input: number
  output: number
  magnitude: Float64Array
  magnitudeDb: Float64Array
  phaseDeg: Float64Array
}

export interface FrequencyResponse {
  omega: Float64Array
  channels: ChannelResponse[]
}

/** log-spaced frequencies covering the poles' corner frequencies two decades either side */
export function defaultFrequencies(lin: LinearModel, poles: Eigenvalues, count = 200): Float64Array {
  let lo = Infinity
  let hi = 0
  for (let k = 0; k < poles.re.length; k++) {
    let w = Math.hypot(poles.re[k], poles.im[k])
    if (lin.kind === 'discrete') {
      const ts = lin.sampleTime ?? 1
      const mag = w
      w = mag > 0 ? Math.hypot(Math.log(mag), Math.atan2(poles.im[k], poles.re[k])) / ts : 0
    }
    if (w > 0 && Number.isFinite(w)) { lo = Math.min(lo, w); hi = Math.max(hi, w) }
  }
  if (!Number.isFinite(lo)) { lo = 1; hi = 1 }
  let a = Math.log10(lo) - 2
  let b = Math.log10(hi) + 2
  if (lin.kind === 'discrete') b = Math.min(b, Math.log10(Math.PI / (lin.sampleTime ?? 1)))
  if (!(b > a)) a = b - 4
  return Float64Array.from({ length: count }, (_, i) => 10 ** (a + ((b - a) * i) / (count - 1)))
}

export function frequencyResponse(lin: LinearModel, omega: Float64Array): FrequencyResponse {
  const { nx: n, nu: m, ny: p } = lin
  const nw = omega.length
  const channels: ChannelResponse[] = []
  for (let i = 0; i < p; i++) for (let j = 0; j < m; j++) {
    channels.push({ input: j, output: i, magnitude: new Float64Array(nw), magnitudeDb: new Float64Array(nw), phaseDeg: new Float64Array(nw) })
  }
  // delay-free B and D
  const B0 = Float64Array.from(lin.B)
  const D0 = Float64Array.from(lin.D)
  for (const dl of lin.delays) {
    for (let r = 0; r < n; r++) B0[r * m + dl.input] -= dl.b[r]
    for (let r = 0; r < p; r++) D0[r * m + dl.input] -= dl.d[r]
  }
  const ar = new Float64Array(n * n)
  const ai = new Float64Array(n * n)
  const br = new Float64Array(n * m)
  const bi = new Float64Array(n * m)
  const xr = new Float64Array(n * m)
  const xi = new Float64Array(n * m)
  const dr = new Float64Array(p * m)
  const di = new Float64Array(p * m)
  const prevPhase = new Float64Array(p * m)
  for (let w = 0; w < nw; w++) {
    const om = omega[w]
    let zr = 0
    let zi = om
    if (lin.kind === 'discrete') {
      const ts = lin.sampleTime ?? 1
      zr = Math.cos(om * ts)
      zi = Math.sin(om * ts)
    }
    for (let r = 0; r < n; r++) for (let c = 0; c < n; c++) {
      ar[r * n + c] = (r === c ? zr : 0) - lin.A[r * n + c]
      ai[r * n + c] = r === c ? zi : 0
    }
    br.set(B0)
    bi.fill(0)
    dr.set(D0)
    di.fill(0)
    for (const dl of lin.delays) {
      const cr = Math.cos(om * dl.tau)
      const ci = -Math.sin(om * dl.tau)
      for (let r = 0; r < n; r++) { br[r * m + dl.input] += dl.b[r] * cr; bi[r * m + dl.input] += dl.b[r] * ci }
      for (let r = 0; r < p; r++) { dr[r * m + dl.input] += dl.d[r] * cr; di[r * m + dl.input] += dl.d[r] * ci }
    }
    const ok = n === 0 ? true : complexSolve(ar, ai, br, bi, n, m, xr, xi)
    let ch = 0
    for (let i = 0; i < p; i++) for (let j = 0; j < m; j++, ch++) {
      let gr = dr[i * m + j]
      let gi = di[i * m + j]
      if (ok) {
        for (let k = 0; k < n; k++) {
          gr += lin.C[i * n + k] * xr[k * m + j]
          gi += lin.C[i * n + k] * xi[k * m + j]
        }
      } else { gr = Infinity; gi = 0 }
      const c = channels[ch]
      const mag = Math.hypot(gr, gi)
      c.magnitude[w] = mag
      c.magnitudeDb[w] = 20 * Math.log10(mag)
      let ph = (Math.atan2(gi, gr) * 180) / Math.PI
      if (w > 0) {
        while (ph - prevPhase[ch] > 180) ph -= 360
        while (ph - prevPhase[ch] < -180) ph += 360
      }
      prevPhase[ch] = ph
      c.phaseDeg[w] = ph
    }
  }
  return { omega: Float64Array.from(omega), channels }
}

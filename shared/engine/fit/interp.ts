/** Read an input trace at given times, linear or held between samples, held past the ends. */
import type { InputTrace } from '../simulate-contract'

export function sampleTrace(trace: InputTrace, times: ArrayLike<number>, mode: 'linear' | 'hold', out: Float64Array): void {
  const { t, v } = trace
  const n = t.length
  let k = 0
  for (let i = 0; i < times.length; i++) {
    const ti = times[i]
    if (n === 0) {
      out[i] = NaN
      continue
    }
    if (ti <= t[0]) {
      out[i] = v[0]
      continue
    }
    if (ti >= t[n - 1]) {
      out[i] = v[n - 1]
      continue
    }
    if (ti < t[k]) k = 0
    while (k + 1 < n && t[k + 1] <= ti) k++
    if (mode === 'hold' || t[k] === ti) out[i] = v[k]
    else out[i] = v[k] + ((v[k + 1] - v[k]) * (ti - t[k])) / (t[k + 1] - t[k])
  }
}

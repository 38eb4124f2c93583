/**
 * The segments' simulated outputs at an iterate of a multiple-shooting fit, for the run page while the
 * fit runs. Read back from the residual the optimiser already holds (r = √w·(ŷ − y) on output rows,
 * problem.ts), so no simulation is added: ŷ = y + r/√w.
 */
import type { LiveSegmentLine } from '../../../api/runs'
import { toDeclared } from '../../../sheet/compiled'
import type { MultipleShootingProblem } from './problem'

/** Points kept per line (measured and simulated alike): every k-th sample, plus each segment's ends. */
export const LIVE_LINE_POINTS = 400

export function segmentLinesAt(ms: MultipleShootingProblem, r: Float64Array, maxPoints = LIVE_LINE_POINTS): LiveSegmentLine[] {
  const model = ms.base.model
  const sec = model.secondsPerTimeUnit
  const lines: LiveSegmentLine[] = []
  ms.base.experiments.forEach((ex, e) => {
    const { tIdx, oIdx, y, sqrtW, offset, count } = ex.obs
    const segs = ms.segments.filter((s) => s.experiment === e)
    model.outputs.forEach((out, o) => {
      let total = 0
      for (let i = 0; i < count; i++) if (oIdx[i] === o) total++
      if (!total) return
      const stride = Math.max(1, Math.ceil(total / maxPoints))
      const line: LiveSegmentLine = { experiment: ex.data.name, output: out.name, unit: out.unit, t: [], measured: [], segments: [] }
      let k = 0
      for (const seg of segs) {
        const st: number[] = []
        const sy: (number | null)[] = []
        let last = -1
        for (let i = seg.obs0; i < seg.obs1; i++) if (oIdx[i] === o) last = i
        let first = true
        for (let i = seg.obs0; i < seg.obs1; i++) {
          if (oIdx[i] !== o) continue
          const keep = k++ % stride === 0 || first || i === last
          first = false
          if (!keep) continue
          const t = ex.tOut[tIdx[i]] * sec
          line.t.push(t)
          line.measured.push(Number.isFinite(y[i]) ? toDeclared(out, y[i]) : null)
          const sim = sqrtW[i] > 0 ? y[i] + r[offset + i] / sqrtW[i] : NaN
          st.push(t)
          sy.push(Number.isFinite(sim) ? toDeclared(out, sim) : null)
        }
        line.segments.push({ t: st, y: sy })
      }
      lines.push(line)
    })
  })
  return lines
}

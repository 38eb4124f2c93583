/**
 * A linearised 95 % interval that reaches past a parameter's bounds is a sign that the data determine
 * the parameter poorly and that the linearisation does not hold over the interval (D. M. Bates &
 * D. G. Watts, "Nonlinear Regression Analysis and Its Applications", Wiley 1988, ch. 6: profile-t
 * intervals where the linear approximation fails). The estimate row keeps the interval as computed;
 * the fit says so in words and points to the profile-likelihood interval.
 */
import type { EstimateRow } from '../../api/fit'

const show = (v: number) => Number(v.toPrecision(4)).toString()

/** One warning per estimate whose linearised interval crosses its lower or upper bound. */
export function intervalBoundWarnings(rows: readonly EstimateRow[]): string[] {
  const out: string[] = []
  for (const r of rows) {
    if (!r.determined || r.atBound || !r.ci95 || r.ci95[0] === null || r.ci95[1] === null || r.stdError === null) continue
    const [lo, hi] = r.ci95
    const past = [lo < r.lower ? `lower bound ${show(r.lower)}` : null, hi > r.upper ? `upper bound ${show(r.upper)}` : null].filter((x) => x !== null)
    if (!past.length) continue
    const unit = r.unit && r.unit !== '1' ? ` ${r.unit}` : ''
    const name = r.experiment === null ? r.name : `${r.name} (record ${r.experiment + 1})`
    const rel = r.value !== 0 ? ` (standard error ${Math.round((100 * r.stdError) / Math.abs(r.value))} % of the value)` : ''
    out.push(`'${name}': its linearised 95 % interval [${show(lo)}, ${show(hi)}]${unit} reaches past its ${past.join(' and ')}${rel}: these data determine it poorly and the interval is not to be trusted there; ask for its profile-likelihood interval, or add data that excite it`)
  }
  return out
}

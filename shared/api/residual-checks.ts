/**
 * The verdict table of the residual checks, in words, shared by the results page, the printable report
 * and the CLI. Each check compares its p-value with 0.05 (the 5 % level of the bands; common practice,
 * no source). The statistics themselves are computed in shared/engine/stats (sources cited there).
 */
import type { ResidualDiagnostics } from './fit'

export const CHECK_LEVEL = 0.05

export interface ResidualVerdict {
  /** whiteness, independence or normality */
  kind: 'whiteness' | 'independence' | 'normality'
  check: string
  /** the statistic in words, e.g. "D = 0.067 (band 0.137)" */
  statistic: string
  pValue: number
  passed: boolean
  /** what the outcome means */
  meaning: string
}

const g = (v: number, d = 3) => (Math.abs(v) >= 1e4 || (Math.abs(v) < 1e-3 && v !== 0) ? v.toExponential(2) : String(Number(v.toPrecision(d))))

/** p-value in words: "< 0.001" below a thousandth. */
export function formatP(p: number): string {
  return p < 0.001 ? '< 0.001' : p.toFixed(3)
}

/** A lag count as time in the sheet's unit ("12 s"), or in samples when the step is unknown (older runs). */
export function lagText(lags: number, r: Pick<ResidualDiagnostics, 'sampleStep' | 'timeUnit'>): string {
  return r.sampleStep && r.timeUnit ? `${g(lags * r.sampleStep)} ${r.timeUnit}` : `${lags} samples`
}

export function residualVerdicts(r: ResidualDiagnostics): ResidualVerdict[] {
  const out: ResidualVerdict[] = []
  const cp = r.periodogram
  if (cp) {
    const passed = cp.pValue >= CHECK_LEVEL
    out.push({
      kind: 'whiteness', check: 'Whiteness: cumulative periodogram (Kolmogorov–Smirnov)',
      statistic: `D = ${g(cp.d)} (95 % band ±${g(cp.band)}, ${cp.q} frequencies)`, pValue: cp.pValue, passed,
      meaning: passed ? 'the residual power is spread evenly over frequency, as for white noise' : 'the residual power gathers at some frequencies: dynamics the model does not capture',
    })
  }
  const lb = r.ljungBox
  const lbPassed = lb.pValue >= CHECK_LEVEL
  out.push({
    kind: 'whiteness', check: `Whiteness: Ljung–Box over lags up to ${lagText(lb.lags, r)}`,
    statistic: `Q = ${g(lb.q)} (χ² with ${lb.lags} degrees of freedom)`, pValue: lb.pValue, passed: lbPassed,
    meaning: lbPassed ? 'no serial correlation detected' : 'the residuals are correlated in time',
  })
  for (const it of r.independence ?? []) {
    const passed = it.pValue >= CHECK_LEVEL
    out.push({
      kind: 'independence', check: `Independence from input ${it.input}`,
      statistic: `S = ${g(it.statistic)} (χ² with ${it.dof} degrees of freedom, lags 0 to ${lagText(it.dof - 1, r)})`, pValue: it.pValue, passed,
      meaning: passed ? 'no trace of this input left in the residuals' : 'the residuals still follow this input: part of its effect is not modelled',
    })
  }
  const nm = r.normality
  if (nm) {
    const passed = nm.pValue >= CHECK_LEVEL
    out.push({
      kind: 'normality', check: 'Normality: Jarque–Bera',
      statistic: `JB = ${g(nm.statistic)} (skewness ${g(nm.skewness, 2)}, kurtosis ${g(nm.kurtosis, 3)})`, pValue: nm.pValue, passed,
      meaning: passed ? 'consistent with Gaussian noise' : 'not Gaussian (outliers or skew): the linearised intervals are less reliable',
    })
  }
  return out
}

const SECONDS: Record<string, number> = { s: 1, min: 60, h: 3600 }
/** Seconds per sheet time unit for the units the language knows (s, min, h); 1 otherwise. */
export function secondsPer(unit: string | undefined): number {
  return (unit && SECONDS[unit]) || 1
}

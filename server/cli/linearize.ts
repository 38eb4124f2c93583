/**
 * `pewter linearize <sheet> [--set p=v …] [--input u=v …] [--at-steady | --t t] [--fit fit.json]
 *    [--frequencies n] [--json]`
 *
 * Operating point (or the point reached at time t of a simulation from the sheet's initial states with
 * the inputs held), A, B, C, D in declared units, poles with time constants, natural frequencies and
 * damping, zeros, DC gains, controllability/observability ranks, frequency and step responses. With
 * --fit (the JSON of `pewter fit --json`) the shared estimates are applied and the uncertainty of
 * poles and gains is propagated from the fit's covariance. --json prints the full analysis
 * (shared/api/handover.ts); otherwise a readable summary.
 * Exit 0: done; 1: the sheet has errors or no operating point/linearisation; 2: bad arguments or files.
 */
import { SheetError } from '../../shared/sheet/index'
import { analyzeModel, covarianceFromFit, resolveValues, AnalysisInputError } from '../../shared/engine/linear/index'
import type { LinearAnalysis } from '../../shared/api/handover'
import { ArgError } from './args'
import { loadSheet, parseHandoverArgs, type HandoverArgs, type LoadedSheet } from './handover-args'

const USAGE = 'usage: pewter linearize <sheet> [--set p=v …] [--input u=v …] [--at-steady | --t t] [--fit fit.json] [--frequencies n] [--json]'

/** the analysis for parsed arguments (shared with `pewter export`) */
export function analyze(o: HandoverArgs, s: LoadedSheet, frequencies = o.frequencies): LinearAnalysis {
  const v = resolveValues(s.model, { fit: s.fit ? { result: s.fit, label: `the fit result ${o.fit}` } : null, set: o.set, inputs: o.inputs })
  const cov = s.fit ? covarianceFromFit(s.model, s.fit) : null
  return analyzeModel(s.model, { p: v.p, u: v.u, at: o.at, provenance: v.provenance, covariance: cov, frequencies, steps: frequencies > 0 })
}

const g = (v: number | null, d = 6) => (v === null ? '—' : Number(v.toPrecision(d)).toString())

function summary(a: LinearAnalysis): string {
  const out: string[] = []
  const tu = a.units.time
  out.push(`${a.title} (${a.kind}${a.sampleTime ? `, Ts = ${a.sampleTime} ${tu}` : ''}); parameters: ${a.provenance}`)
  if (a.at.kind === 'steady') out.push(`operating point (${a.at.operatingPoint.status}): ${a.states.map((n, i) => `${n} = ${g(a.x[i])} ${a.units.states[i]}`).join(', ')}`)
  else out.push(`at t = ${a.at.t} ${tu}: ${a.states.map((n, i) => `${n} = ${g(a.x[i])} ${a.units.states[i]}`).join(', ')}`)
  out.push(`inputs: ${a.inputs.map((n, i) => `${n} = ${g(a.u[i])} ${a.units.inputs[i]}`).join(', ') || 'none'}`)
  const mat = (name: string, m: number[][], rows: string[], cols: string[]) => {
    out.push(`${name} (rows ${rows.join(', ') || '—'}; columns ${cols.join(', ') || '—'}):`)
    for (const r of m) out.push(`  ${r.map((v) => g(v).padStart(13)).join(' ')}`)
  }
  mat('A', a.A, a.states, a.states)
  mat('B', a.B, a.states, a.inputs)
  mat('C', a.C, a.outputs, a.states)
  mat('D', a.D, a.outputs, a.inputs)
  out.push(`poles (1/${tu}):`)
  for (const p of a.poles) {
    const sd = p.sdRe !== null ? ` ± ${g(p.sdRe, 3)}${p.im !== 0 ? ` ± ${g(p.sdIm, 3)}j` : ''}` : ''
    out.push(`  ${g(p.re)}${p.im !== 0 ? ` ${p.im > 0 ? '+' : '-'} ${g(Math.abs(p.im))}j` : ''}${sd}   time constant ${g(p.timeConstant)} ${tu}, ωn ${g(p.naturalFrequency)} rad/${tu}, ζ ${g(p.damping, 4)}${p.stable ? '' : '  (unstable)'}`)
  }
  if (a.dcGain) {
    out.push('DC gains:')
    a.dcGain.forEach((r, i) => r.forEach((v, j) => out.push(`  ${a.outputs[i]} / ${a.inputs[j]}: ${g(v)}${a.dcGainSd?.[i]?.[j] != null ? ` ± ${g(a.dcGainSd[i][j], 3)}` : ''} ${a.units.outputs[i]}/${a.units.inputs[j] || '1'}`)))
  }
  const cx = (c: { re: number; im: number }) => `${g(c.re)}${c.im ? ` ${c.im > 0 ? '+' : '-'} ${g(Math.abs(c.im))}j` : ''}`
  if (a.systemZeros) out.push(`zeros of the whole system (1/${tu}): ${a.systemZeros.zeros.length ? a.systemZeros.zeros.map(cx).join(', ') : 'none'} (normal rank ${a.systemZeros.normalRank})`)
  for (const z of a.zeros) if (z.zeros && z.zeros.length) out.push(`zeros ${z.output}/${z.input}: ${z.zeros.map(cx).join(', ')}`)
  out.push(`controllability rank ${a.controllability.rank} of ${a.controllability.n}, observability rank ${a.observability.rank} of ${a.observability.n} (singular values above ${a.controllability.tolerance} of the largest)`)
  for (const w of a.warnings) out.push(`warning: ${w}`)
  out.push(...a.cautions)
  return out.join('\n') + '\n'
}

export async function run(args: string[]): Promise<number> {
  let o: HandoverArgs
  let s: LoadedSheet
  try {
    o = parseHandoverArgs(args, false)
    s = await loadSheet(o)
  } catch (e) {
    if (e instanceof ArgError) {
      process.stderr.write(`pewter linearize: ${e.message}\n${USAGE}\n`)
      return 2
    }
    if (e instanceof SheetError) {
      process.stderr.write(`pewter linearize: ${args.find((x) => !x.startsWith('-')) ?? ''}: ${e.message}\n`)
      return 1
    }
    throw e
  }
  let a: LinearAnalysis
  try {
    a = analyze(o, s)
  } catch (e) {
    if (e instanceof AnalysisInputError) {
      process.stderr.write(`pewter linearize: ${e.message}\n`)
      return /no (parameter|input) named|must be a finite/.test(e.message) ? 2 : 1
    }
    throw e
  }
  process.stdout.write(o.json ? `${JSON.stringify(a)}\n` : summary(a))
  return 0
}

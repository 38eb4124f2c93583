/**
 * Exports of a finished run: CSV (parameter table, fit figures per output and experiment, correlation
 * of the estimates, the measured and simulated time series with residuals, provenance; each section
 * headed by a comment line) and JSON (settings, provenance, the sheet text of the fitted version and the
 * whole result). Both carry the result caution. The calibrated sheet: the fitted version's text with the
 * shared estimates written into its param lines.
 */
import { describeOutcome, type FitResult, type OutputRow } from '../../shared/api/fit'
import type { EvaluationResult } from '../../shared/api/evaluation'
import { residualVerdicts } from '../../shared/api/residual-checks'
import { RESULT_CAUTION, type OutputTrace, type RunDto } from '../../shared/api/runs'
import { conflict } from '../errors'

/** RFC 4180 field: quoted when it holds a comma, quote, or line break. */
function field(v: unknown): string {
  if (v === null || v === undefined) return ''
  const s = typeof v === 'number' ? (Number.isFinite(v) ? String(v) : '') : String(v)
  return /[",\r\n]/.test(s) ? `"${s.replace(/"/g, '""')}"` : s
}
const line = (cells: unknown[]) => cells.map(field).join(',')

/** The fitted version's sheet, for the JSON export. */
export interface FittedSheet {
  modelId: number
  version: number
  text: string
}

export function exportJson(run: RunDto, sheet: FittedSheet) {
  if (run.status !== 'succeeded' || !run.result) throw conflict(`Run ${run.id} has no result to export (status ${run.status})`)
  const { traces, ...fit } = run.result as Record<string, unknown>
  return {
    caution: RESULT_CAUTION,
    sheet: { modelId: sheet.modelId, version: sheet.version, sha256: run.provenance.sheetHash, text: sheet.text },
    run: {
      id: run.id, name: run.name, project: run.projectName, model: run.modelTitle, modelVersion: run.modelVersion, status: run.status,
      outcome: run.outcome ?? fit.status ?? null, outcomeText: describeOutcome(String(run.outcome ?? fit.status ?? ''), run.convergedBy ?? (fit.convergedBy as string | null | undefined)),
      createdAt: run.createdAt, finishedAt: run.finishedAt,
    },
    provenance: run.provenance,
    settings: run.settings,
    result: fit,
    traces: traces ?? [],
  }
}

/** The residual checks of every output as CSV rows (one per check). */
function checkRows(outputs: OutputRow[]): string[] {
  const rows = outputs.flatMap((o) => (o.residuals ? residualVerdicts(o.residuals) : []).map((v) => line([o.name, o.experimentName, v.check, v.statistic, v.pValue, v.passed ? 'pass' : 'fail'])))
  return rows.length ? ['', '# residual checks (5 % level)', line(['output', 'record', 'check', 'statistic', 'p_value', 'verdict']), ...rows] : []
}

function evaluationCsv(run: RunDto, r: EvaluationResult): string {
  const out: string[] = []
  out.push(`# ${RESULT_CAUTION}`)
  out.push(`# Pewter evaluation run ${run.id} "${run.name}": model "${run.modelTitle}" version ${run.modelVersion}, project "${run.projectName}"; values from ${run.settings.valuesFrom?.name ?? 'the model version'}; records started from ${r.start === 'estimated' ? 'initial states estimated on each record (parameters frozen)' : "the sheet's initial state"}`)
  out.push(`# engine ${run.provenance.engineVersion}; sheet sha256 ${run.provenance.sheetHash}`)
  for (const d of run.provenance.datasets) out.push(`# dataset ${d.id} "${d.name}" (${d.role}) sha256 ${d.contentHash}`)
  out.push('')
  out.push('# parameter values simulated with')
  out.push(line(['name', 'unit', 'value', 'source']))
  for (const p of r.parameters) out.push(line([p.name, p.unit, p.value, p.source]))
  out.push('')
  out.push('# figures per output and record')
  out.push(line(['output', 'record', 'n', 'nrmse', 'rmse', 'r2']))
  for (const o of r.outputs) out.push(line([o.name, o.experimentName, o.n, o.nrmse, o.rmse, o.r2]))
  out.push(...checkRows(r.outputs))
  if (r.warnings.length) out.push('', '# warnings', 'warning', ...r.warnings.map((w) => line([w])))
  return out.join('\r\n') + '\r\n'
}

export function exportCsv(run: RunDto): string {
  if (run.status !== 'succeeded' || !run.result) throw conflict(`Run ${run.id} has no result to export (status ${run.status})`)
  if ((run.result as { kind?: string }).kind === 'evaluation') return evaluationCsv(run, run.result as unknown as EvaluationResult)
  const r = run.result as unknown as FitResult
  const out: string[] = []
  out.push(`# ${RESULT_CAUTION}`)
  out.push(`# Pewter fit run ${run.id} "${run.name}": model "${run.modelTitle}" version ${run.modelVersion}, project "${run.projectName}"`)
  out.push(`# run finished; optimiser outcome: ${describeOutcome(r.status, r.convergedBy)} (${r.reason}); weighted cost ${r.sse}; ${r.iterations} iterations; ${r.simulations} simulations; method ${r.method}; weighting ${r.weighting}`)
  out.push(`# engine ${run.provenance.engineVersion}; seed ${run.provenance.seed}; sheet sha256 ${run.provenance.sheetHash}`)
  for (const d of run.provenance.datasets) out.push(`# dataset ${d.id} "${d.name}" (${d.role}) sha256 ${d.contentHash}`)
  out.push('')
  out.push('# estimates')
  out.push(line(['kind', 'name', 'experiment', 'unit', 'estimate', 'std_error', 'ci95_low', 'ci95_high', 'lower_bound', 'upper_bound', 'at_bound', 'start', 'change_from_start', 'determined', 'profile_ci95_low', 'profile_ci95_high']))
  const est = (kind: string, e: FitResult['parameters'][number]) =>
    line([kind, e.name, e.experiment, e.unit, e.value, e.stdError, e.ci95[0], e.ci95[1], e.lower, e.upper, e.atBound ?? '', e.start, e.value - e.start,
      e.determined === false ? 'not determined by these data' : 'yes', e.profileCi95?.[0], e.profileCi95?.[1]])
  for (const p of r.parameters) out.push(est('parameter', p))
  for (const s of r.initialStates) out.push(est('initial_state', s))
  out.push('')
  out.push('# fit per output and record')
  out.push(line(['output', 'record', 'data', 'n', 'nrmse', 'rmse', 'r2', 'ljung_box_q', 'ljung_box_p']))
  for (const o of r.outputs) out.push(line([o.name, o.experimentName, o.validation ? 'validation' : 'estimation', o.n, o.nrmse, o.rmse, o.r2, o.residuals?.ljungBox.q, o.residuals?.ljungBox.pValue]))
  out.push(...checkRows(r.outputs))
  if (r.validationStart) {
    out.push('')
    out.push(`# validation started from ${r.validationStart === 'estimated' ? 'initial states estimated on each record (parameters frozen)' : "the sheet's initial state"}`)
    if (r.validationInitialStates?.length) {
      out.push(line(['experiment', 'state', 'unit', 'initial_value']))
      for (const v of r.validationInitialStates) out.push(line([v.experiment, v.name, v.unit, v.value]))
    }
  }
  const c = r.correlation
  if (c.names.length) {
    out.push('')
    out.push('# correlation of the estimates')
    out.push(line(['', ...c.names]))
    c.matrix.forEach((row, i) => out.push(line([c.names[i], ...row])))
  }
  const traces = ((run.result as { traces?: OutputTrace[] }).traces ?? [])
  if (traces.length) {
    out.push('')
    out.push('# time series: measured and simulated outputs (simulated with the estimates), residual = measured - simulated; t in seconds')
    out.push(line(['dataset', 'data', 'output', 'unit', 't_s', 'measured', 'simulated', 'residual']))
    for (const tr of traces) {
      const data = tr.validation ? 'validation' : 'estimation'
      for (let k = 0; k < tr.t.length; k++) {
        const m = tr.measured[k]
        const y = tr.simulated[k]
        out.push(line([tr.datasetName, data, tr.output, tr.unit, tr.t[k], m, y, m === null || y === null ? null : m - y]))
      }
    }
  }
  const sections: [string, string, string[]][] = [
    ['identifiability', 'finding', [...(r.identifiability?.combinations ?? []), ...(r.identifiability?.advice ? [r.identifiability.advice] : [])]],
    ['warnings', 'warning', r.warnings],
    ['information', 'note', r.notes ?? []],
  ]
  for (const [title, head, rows] of sections) {
    if (!rows.length) continue
    out.push('')
    out.push(`# ${title}`)
    out.push(head)
    for (const w of rows) out.push(line([w]))
  }
  return out.join('\r\n') + '\r\n'
}

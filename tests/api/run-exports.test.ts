/**
 * Hand-over exports of a finished run through the API: the CSV with time series, estimates and the
 * correlation matrix; the JSON with the fitted sheet's text; the calibrated sheet (estimates written into
 * the param lines); saved parameter sets listed for a model and applied to a hand-over analysis and to
 * the starts of a new fit. Data: seeded synthetic traces of the heated buffer vessel template generated
 * with invented constants (server/services/demo-project.ts).
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { CSRF, demo, makeTestApp, signedIn, type Agent, type TestApp } from '../helpers/app'
import { RESULT_CAUTION } from '../../shared/api/runs'
import { compileModel, parseModel } from '../../shared/sheet'
import { linearAnalysis } from '../../shared/api/handover'
import { bufferProject, bufferTemplate, waitForRun, WS } from './runs-helpers'

let t: TestApp
let modeler: Agent
let viewer: Agent
let tv: Awaited<ReturnType<typeof bufferTemplate>>
let pid: number
let bindingId: number
let estId: number
let run: Record<string, any>

/** RFC 4180 row split for the simple fields written here (no quoted commas in these rows) */
const cells = (l: string) => l.split(',')

beforeAll(async () => {
  t = await makeTestApp('run_exports')
  modeler = await signedIn(t.app, demo.modeler)
  viewer = await signedIn(t.app, demo.viewer)
  let valId: number
  ;({ tv, pid, ids: [estId, valId], bindingId } = await bufferProject(t, modeler, 'Run exports (synthetic)', [
    { file: 'est.csv', purpose: 'estimation', csv: { seed: 21, label: 'exports estimation' } },
    { file: 'val.csv', purpose: 'validation', csv: { seed: 22, label: 'exports validation' } },
  ]))
  const r = await modeler.post(`${WS}/projects/${pid}/runs`).set(CSRF)
    .send({ modelId: tv.modelId, version: tv.number, bindingId, estimation: [estId], validation: [valId], weighting: 'ml', seed: 3, name: 'exports fit' })
  expect(r.status).toBe(201)
  run = await waitForRun(modeler, r.body.id)
  expect(run.status).toBe('succeeded')
}, 180_000)
afterAll(async () => { await t?.close() })

describe('run exports', () => {
  it('CSV: estimates, the correlation matrix and every time series with its residual', async () => {
    const csv = await viewer.get(`${WS}/runs/${run.id}/export?format=csv`)
    expect(csv.status).toBe(200)
    const lines = csv.text.split('\r\n')
    expect(lines[0]).toBe(`# ${RESULT_CAUTION}`)
    // correlation: a header of the names, one row per name, 1 on the diagonal
    const c = lines.indexOf('# correlation of the estimates')
    expect(c).toBeGreaterThan(0)
    const names: string[] = run.result.correlation.names
    expect(cells(lines[c + 1])).toEqual(['', ...names])
    names.forEach((n, i) => {
      const row = cells(lines[c + 2 + i])
      expect(row[0]).toBe(n)
      expect(Number(row[1 + i])).toBeCloseTo(1, 12)
      names.forEach((_, j) => {
        const v = run.result.correlation.matrix[i][j]
        if (v !== null) expect(Number(row[1 + j])).toBeCloseTo(v, 12)
      })
    })
    // time series: every sample of every trace, residual = measured − simulated
    const ts = lines.findIndex((l) => l.startsWith('# time series'))
    expect(ts).toBeGreaterThan(c)
    expect(lines[ts + 1]).toBe('dataset,data,output,unit,t_s,measured,simulated,residual')
    const traces: { t: number[]; measured: (number | null)[]; simulated: (number | null)[]; validation: boolean; output: string }[] = run.result.traces
    const total = traces.reduce((s, tr) => s + tr.t.length, 0)
    const rows = lines.slice(ts + 2, ts + 2 + total).map(cells)
    expect(rows).toHaveLength(total)
    expect(rows.every((r) => r.length === 8)).toBe(true)
    expect(new Set(rows.map((r) => r[1]))).toEqual(new Set(['estimation', 'validation']))
    const first = traces[0]
    const k = first.measured.findIndex((m, i) => m !== null && first.simulated[i] !== null)
    const row = rows[k]
    expect(row[2]).toBe(first.output)
    expect(Number(row[4])).toBe(first.t[k])
    expect(Number(row[7])).toBeCloseTo(first.measured[k]! - first.simulated[k]!, 12)
  })

  it('JSON: the fitted version\'s sheet text beside the result', async () => {
    const json = await viewer.get(`${WS}/runs/${run.id}/export?format=json`)
    expect(json.status).toBe(200)
    expect(json.body.sheet).toEqual({ modelId: tv.modelId, version: tv.number, sha256: run.provenance.sheetHash, text: tv.text })
    expect(json.body.caution).toBe(RESULT_CAUTION)
  })

  it('the calibrated sheet: the estimates in the param lines, a header naming the run, and it compiles', async () => {
    const r = await viewer.get(`${WS}/runs/${run.id}/sheet`)
    expect(r.status).toBe(200)
    expect(r.headers['content-type']).toMatch(/text\/plain/)
    expect(r.headers['content-disposition']).toMatch(new RegExp(`attachment; filename="heated-buffer-vessel-v${tv.number}-run${run.id}\\.sheet"`))
    const text = r.text
    expect(text.split('\n')[0]).toMatch(new RegExp(`^# Calibrated sheet: "Heated buffer vessel" version ${tv.number} with the estimates of Pewter fit run #${run.id}`))
    expect(text).toContain(`# ${RESULT_CAUTION}`)
    const parsed = parseModel(text)
    expect(parsed.diagnostics.filter((d) => d.severity === 'error')).toEqual([])
    const m = compileModel(text)
    const shared = run.result.parameters.filter((p: { experiment: number | null }) => p.experiment === null)
    expect(shared.length).toBeGreaterThan(0)
    for (const est of shared) {
      const p = m.params.find((q) => q.name === est.name)!
      // written with 8 significant digits (declared unit)
      expect(Number(p.value.toPrecision(8)) === Number(est.value.toPrecision(8)) || Math.abs(p.value / est.value - 1) < 1e-7).toBe(true)
    }
    expect(r.headers['x-pewter-estimates-written']).toBe(shared.map((p: { name: string }) => p.name).join(','))
    // the rest of the sheet is the fitted version's text unchanged, line for line, except the param lines written
    const body = text.split('\n').filter((l) => !l.startsWith('# Calibrated') && !l.startsWith('# written') && !l.startsWith('# per-record') && l !== `# ${RESULT_CAUTION}`)
    const orig = tv.text.split('\n')
    expect(body).toHaveLength(orig.length)
    body.forEach((l, i) => { if (!shared.some((p: { name: string }) => new RegExp(`^\\s*param\\s+${p.name}\\b`).test(l))) expect(l).toBe(orig[i]) })
  })

  it('the calibrated sheet of a run without a result is refused (409); of an unknown run, 404', async () => {
    const q = await modeler.post(`${WS}/projects/${pid}/runs`).set(CSRF)
      .send({ modelId: tv.modelId, version: tv.number, bindingId, estimation: [estId], seed: 4 })
    await modeler.post(`${WS}/runs/${q.body.id}/cancel`).set(CSRF)
    const cancelled = await waitForRun(modeler, q.body.id)
    expect(cancelled.status).not.toBe('succeeded')
    const r = await viewer.get(`${WS}/runs/${q.body.id}/sheet`)
    expect(r.status).toBe(409)
    expect(r.body.error.message).toMatch(new RegExp(`Run ${q.body.id} has no result`))
    expect((await viewer.get(`${WS}/runs/999999/sheet`)).status).toBe(404)
  })

  it('a saved parameter set is listed for its model and applies to an analysis and to the starts of a new fit', async () => {
    const saved = await modeler.post(`${WS}/runs/${run.id}/parameter-sets`).set(CSRF).send({ name: 'B2 exports set' })
    expect(saved.status).toBe(201)
    const list = await viewer.get(`${WS}/models/${tv.modelId}/parameter-sets`)
    expect(list.status).toBe(200)
    expect(list.body.parameterSets.map((s: { id: number }) => s.id)).toContain(saved.body.id)
    expect((await viewer.get(`${WS}/models/999999/parameter-sets`)).status).toBe(404)
    // the hand-over analysis with the set: its values in the parameters, named in the provenance
    const a = await viewer.post(`${WS}/models/${tv.modelId}/versions/${tv.number}/linearize`).set(CSRF)
      .send({ source: { kind: 'parameter-set', parameterSetId: saved.body.id }, frequencies: 0, steps: false })
    expect(a.status, JSON.stringify(a.body).slice(0, 300)).toBe(200)
    const an = linearAnalysis.parse(a.body)
    expect(an.provenance).toContain(`parameter set 'B2 exports set' (#${saved.body.id})`)
    const cv = run.result.parameters.find((p: { name: string }) => p.name === 'Cv')
    expect(an.parameters.find((p) => p.name === 'Cv')!.value).toBeCloseTo(cv.value, 12)
    // a new fit started from the set's values (what the run form's "start from a saved parameter set" sends)
    const free = run.settings.free.map((f: { name: string; lower: number; upper: number }) => ({ ...f, start: saved.body.values[f.name].value }))
    const next = await modeler.post(`${WS}/projects/${pid}/runs`).set(CSRF)
      .send({ modelId: tv.modelId, version: tv.number, bindingId, estimation: [estId], free, seed: 3, name: 'from the saved set' })
    expect(next.status).toBe(201)
    expect(next.body.settings.free.map((f: { start: number }) => f.start)).toEqual(free.map((f: { start: number }) => f.start))
    await modeler.post(`${WS}/runs/${next.body.id}/cancel`).set(CSRF)
  })
})

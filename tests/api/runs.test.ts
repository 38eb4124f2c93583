/**
 * Upload → bind → fit → result through the API, on demo-like data: seeded synthetic traces of the heated
 * buffer vessel template generated with invented constants (server/services/demo-project.ts), so the
 * generating values are known. Checks the intervals cover them, provenance, live progress over SSE,
 * cancel, exports, "run again", parameter sets, publishing a version, and roles.
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { CSRF, demo, makeTestApp, signedIn, type Agent, type TestApp } from '../helpers/app'
import { BUFFER_TRUTH, seedDemoProject } from '../../server/services/demo-project'
import { RESULT_CAUTION } from '../../shared/api/runs'
import { fitResult } from '../../shared/api/fit'
import { bufferProject, bufferTemplate, waitForRun, WS } from './runs-helpers'
import { eq } from 'drizzle-orm'
import { models } from '../../server/db/schema'

let t: TestApp
let modeler: Agent
let viewer: Agent
let reviewer: Agent
let admin: Agent
let pid: number
let tv: Awaited<ReturnType<typeof bufferTemplate>>
let estId: number
let valId: number
let bindingId: number
/** the file's reference fit (baseRun, seed 5), made before any test so each reads it without depending on another */
let finished: Record<string, any>

beforeAll(async () => {
  t = await makeTestApp('runs')
  modeler = await signedIn(t.app, demo.modeler)
  viewer = await signedIn(t.app, demo.viewer)
  reviewer = await signedIn(t.app, demo.reviewer)
  admin = await signedIn(t.app, demo.admin)
  // seeded synthetic data (invented constants BUFFER_TRUTH), different seeds for estimation and validation
  ;({ tv, pid, ids: [estId, valId], bindingId } = await bufferProject(t, modeler, 'Buffer vessel fit test', [
    { file: 'est.csv', purpose: 'estimation', csv: { seed: 11, label: 'test estimation' } },
    { file: 'val.csv', purpose: 'validation', csv: { seed: 12, label: 'test validation' } },
  ]))
  const r = await modeler.post(`${WS}/projects/${pid}/runs`).set(CSRF).send({ ...baseRun(), name: 'first fit' })
  expect(r.status).toBe(201)
  expect(['queued', 'running']).toContain(r.body.status)
  finished = await waitForRun(modeler, r.body.id)
})
afterAll(async () => { await t.close() })

const baseRun = () => ({ modelId: tv.modelId, version: tv.number, bindingId, estimation: [estId], validation: [valId], weighting: 'ml', seed: 5 })

describe('a fit from upload to result', () => {
  it('recovers the generating constants inside their 95 % intervals, with validation figures', async () => {
    const run = finished
    expect(run.error).toBeNull()
    expect(run.status).toBe('succeeded')
    const result = fitResult.parse(Object.fromEntries(Object.entries(run.result).filter(([k]) => k !== 'traces')))
    const byName = Object.fromEntries(result.parameters.map((p) => [p.name, p]))
    for (const [name, truth] of [['Cv', BUFFER_TRUTH.Cv], ['UA', BUFFER_TRUTH.UA], ['tau', BUFFER_TRUTH.tau]] as const) {
      const p = byName[name]
      expect(p.ci95[0]!, `${name} lower CI`).toBeLessThan(truth)
      expect(p.ci95[1]!, `${name} upper CI`).toBeGreaterThan(truth)
      expect(p.atBound).toBeNull()
    }
    const T0 = result.initialStates.find((s) => s.name === 'T')!
    expect(T0.ci95[0]!).toBeLessThan(BUFFER_TRUTH.T0)
    expect(T0.ci95[1]!).toBeGreaterThan(BUFFER_TRUTH.T0)
    // ml weighting recovers the noise levels the data were made with (0.5 cm, 0.15 K) to within 20 %
    const level = result.outputs.find((o) => o.name === 'level' && !o.validation)!
    const temp = result.outputs.find((o) => o.name === 'temp' && !o.validation)!
    expect(level.sigmaEstimate! / 0.005).toBeGreaterThan(0.8)
    expect(level.sigmaEstimate! / 0.005).toBeLessThan(1.2)
    expect(temp.sigmaEstimate! / 0.15).toBeGreaterThan(0.8)
    expect(temp.sigmaEstimate! / 0.15).toBeLessThan(1.2)
    const vLevel = result.outputs.find((o) => o.name === 'level' && o.validation)!
    expect(vLevel.r2!).toBeGreaterThan(0.9)
    // traces for the plots: estimation and validation, measured and simulated, in the sheet's units
    const traces = run.result.traces as { validation: boolean; output: string; measured: (number | null)[]; simulated: (number | null)[]; unit: string }[]
    expect(traces.filter((x) => x.validation)).toHaveLength(2)
    const tl = traces.find((x) => x.output === 'level' && !x.validation)!
    expect(tl.unit).toBe('m')
    expect(Math.abs(tl.measured[10]! - tl.simulated[10]!)).toBeLessThan(0.03)
    // the covariance band of the simulated output: present, positive, and narrow next to the 0.5 cm noise
    // the data were made with (the estimates are well determined by 1000 samples)
    const band = (tl as unknown as { band: (number | null)[] }).band
    expect(band).toHaveLength(tl.simulated.length)
    expect(band.every((h) => h !== null && h >= 0)).toBe(true)
    expect(Math.max(...(band as number[]))).toBeGreaterThan(0)
    expect(Math.max(...(band as number[]))).toBeLessThan(0.005)
    // residual checks: lags in the sheet's time unit, cumulative periodogram, normality, independence per input
    expect(level.residuals!.timeUnit).toBe('s')
    expect(level.residuals!.sampleStep).toBeGreaterThan(0)
    const cp = level.residuals!.periodogram!
    expect(cp.cumulative[cp.cumulative.length - 1]).toBeCloseTo(1, 12)
    expect(cp.band).toBeCloseTo(1.36 / Math.sqrt(cp.q), 12)
    expect(cp.frequency[cp.frequency.length - 1]).toBeLessThanOrEqual(0.5 / level.residuals!.sampleStep! + 1e-12)
    expect(level.residuals!.normality!.test).toBe('jarque-bera')
    expect(level.residuals!.independence!.map((i) => i.input).sort()).toEqual(['P_h', 'T_feed', 'opening', 'q_in'])
    expect(result.landscape?.cost.length).toBeGreaterThan(5)
    expect(run.caution).toBe(RESULT_CAUTION)
    expect(run.progress.fraction).toBe(1)
    expect(run.progress.costHistory.length).toBeGreaterThan(1)
  })

  it('fits by multiple shooting when segments are asked for: same constants, segment boundaries in the result', async () => {
    const r = await modeler.post(`${WS}/projects/${pid}/runs`).set(CSRF).send({ ...baseRun(), weighting: 'sheet', name: 'segmented fit', segments: 6 })
    expect(r.status).toBe(201)
    expect(r.body.settings.segments).toBe(6)
    const run = await waitForRun(modeler, r.body.id)
    expect(run.error).toBeNull()
    expect(run.status).toBe('succeeded')
    const result = fitResult.parse(Object.fromEntries(Object.entries(run.result).filter(([k]) => k !== 'traces')))
    const ms = result.multipleShooting!
    expect(ms.segments).toBe(6)
    expect(ms.continuous).toBe(true)
    expect(ms.experiments[0].boundaries).toHaveLength(5)
    // the segments' own lines, as the run page drew them while shooting: each output of the record,
    // measured and six segment lines in the sheet's units and seconds
    const lines = run.progress.segmentLines as { output: string; unit: string; t: number[]; measured: (number | null)[]; segments: { t: number[]; y: (number | null)[] }[] }[]
    expect(lines.map((l) => l.output).sort()).toEqual(['level', 'temp'])
    const level = lines.find((l) => l.output === 'level')!
    expect(level.unit).toBe('m')
    expect(level.segments).toHaveLength(6)
    expect(level.segments.reduce((a, s) => a + s.t.length, 0)).toBe(level.t.length)
    expect(level.t.length).toBeLessThanOrEqual(400 + 12)
    expect(typeof run.progress.segmentIteration).toBe('number')
    const traces = run.result.traces as { output: string; validation: boolean; t: number[]; measured: (number | null)[] }[]
    const tl = traces.find((x) => x.output === 'level' && !x.validation)!
    const k = tl.t.indexOf(level.t[1])
    expect(k).toBeGreaterThan(0)
    expect(level.measured[1]).toBeCloseTo(tl.measured[k]!, 12)
    const byName = Object.fromEntries(result.parameters.map((p) => [p.name, p]))
    for (const [name, truth] of [['Cv', BUFFER_TRUTH.Cv], ['UA', BUFFER_TRUTH.UA], ['tau', BUFFER_TRUTH.tau]] as const) {
      expect(Math.abs(byName[name].value - truth), name).toBeLessThan(4 * byName[name].stdError!)
    }
  })

  it('records the provenance: model version, dataset hashes, settings, seed and engine version', async () => {
    const p = finished.provenance
    expect(p.modelId).toBe(tv.modelId)
    expect(p.modelVersion).toBe(tv.number)
    expect(p.sheetHash).toMatch(/^[0-9a-f]{64}$/)
    expect(p.engineVersion).toMatch(/^pewter-engine /)
    expect(p.seed).toBe(5)
    const est = (await modeler.get(`${WS}/datasets/${estId}`)).body
    expect(p.datasets).toEqual([
      { id: estId, name: est.name, contentHash: est.contentHash, role: 'estimation' },
      expect.objectContaining({ id: valId, role: 'validation' }),
    ])
    const s = finished.settings
    expect(s.free.map((f: { name: string }) => f.name)).toEqual(['Cv', 'UA', 'tau'])
    expect(s.free[0]).toEqual({ name: 'Cv', lower: 1e-4, upper: 0.1, start: 4e-3 })
    expect(s.initialStates).toEqual([{ name: 'T', lower: 270, upper: 370, start: 300 }])
    expect(s.mapping.inputs.q_in).toBe('q_in')
    expect(s.method).toBe('lm')
  })

  it('"run again" reproduces the result', async () => {
    const r = await modeler.post(`${WS}/runs/${finished.id}/rerun`).set(CSRF)
    expect(r.status).toBe(201)
    expect(r.body.settings.rerunOf).toBe(finished.id)
    const again = await waitForRun(modeler, r.body.id)
    expect(again.status).toBe('succeeded')
    expect(again.result.sse).toBe(finished.result.sse)
    expect(again.result.parameters.map((p: { value: number }) => p.value)).toEqual(finished.result.parameters.map((p: { value: number }) => p.value))
    expect(again.provenance.datasets).toEqual(finished.provenance.datasets)
  })

  it('exports CSV and JSON that parse and carry the caution', async () => {
    const csv = await viewer.get(`${WS}/runs/${finished.id}/export?format=csv`)
    expect(csv.status).toBe(200)
    expect(csv.headers['content-type']).toMatch(/text\/csv/)
    const lines = csv.text.split('\r\n')
    expect(lines[0]).toBe(`# ${RESULT_CAUTION}`)
    const head = lines.indexOf('kind,name,experiment,unit,estimate,std_error,ci95_low,ci95_high,lower_bound,upper_bound,at_bound,start,change_from_start,determined,profile_ci95_low,profile_ci95_high')
    expect(head).toBeGreaterThan(0)
    const cv = lines[head + 1].split(',')
    expect(cv[1]).toBe('Cv')
    expect(Number(cv[4])).toBeCloseTo(finished.result.parameters[0].value, 12)
    expect(Number(cv[12])).toBeCloseTo(finished.result.parameters[0].value - 4e-3, 12)
    expect(cv[13]).toBe('yes')
    const json = await viewer.get(`${WS}/runs/${finished.id}/export?format=json`)
    expect(json.status).toBe(200)
    expect(json.body.caution).toBe(RESULT_CAUTION)
    expect(fitResult.safeParse(json.body.result).success).toBe(true)
    expect(json.body.provenance.seed).toBe(5)
    expect(json.body.traces.length).toBe(4)
  })

  it('streams live progress over server-sent events until the run ends', async () => {
    const r = await modeler.post(`${WS}/projects/${pid}/runs`).set(CSRF).send({ ...baseRun(), seed: 6 })
    expect(r.status).toBe(201)
    const sse = await viewer.get(`${WS}/runs/${r.body.id}/events`).buffer(true).parse((res, cb) => {
      let text = ''
      res.on('data', (c: Buffer) => { text += c.toString('utf8') })
      res.on('end', () => cb(null, text))
    })
    expect(sse.status).toBe(200)
    expect(sse.headers['content-type']).toMatch(/text\/event-stream/)
    const events = String(sse.body).split('\n\n').filter((b) => b.startsWith('event:')).map((b) => {
      const [ev, data] = b.split('\n')
      return { event: ev.slice(7), data: JSON.parse(data.slice(6)) }
    })
    const progress = events.filter((e) => e.event === 'progress')
    expect(progress.length).toBeGreaterThan(1)
    expect(progress.some((e) => e.data.status === 'running' && e.data.progress)).toBe(true)
    const last = progress[progress.length - 1].data
    expect(last.status).toBe('succeeded')
    expect(last.progress.iteration).toBeGreaterThanOrEqual(1)
    expect(last.progress.fraction).toBe(1)
    expect(events[events.length - 1]).toEqual({ event: 'end', data: { status: 'succeeded', error: null } })
  })

  it('computes the cost landscape for a chosen pair', async () => {
    const r = await viewer.get(`${WS}/runs/${finished.id}/landscape?a=UA&b=tau&n=7`)
    expect(r.status).toBe(200)
    expect(r.body.x.name).toBe('UA')
    expect(r.body.cost).toHaveLength(7)
    expect(r.body.estimate[0]).toBeCloseTo(finished.result.parameters[1].value, 9)
    const bad = await viewer.get(`${WS}/runs/${finished.id}/landscape?a=UA&b=nope`)
    expect(bad.status).toBe(400)
  })
})

describe('cancel', () => {
  /** Polls the run until `ready` holds for it while it runs. */
  async function whileRunning(rid: number, ready: (s: Record<string, any>) => boolean) {
    for (;;) {
      const s = (await modeler.get(`${WS}/runs/${rid}`)).body
      if (s.status === 'running' && ready(s)) return s
      expect(['queued', 'running']).toContain(s.status)
      await new Promise((res) => setTimeout(res, 50))
    }
  }

  it('stops a running fit: its worker ends it cancelled; before any start finished nothing is kept', async () => {
    // 64 Nelder–Mead starts on the same data keep the fit busy for many seconds (Levenberg–Marquardt's can
    // all finish before the first progress is seen on a quiet machine); it is cancelled long before the end
    const r = await modeler.post(`${WS}/projects/${pid}/runs`).set(CSRF).send({ ...baseRun(), starts: 64, weighting: 'sheet', method: 'nelder-mead' })
    expect(r.status).toBe(201)
    const rid = r.body.id
    // under way in the first start: an iteration reported, with the live estimates of the free parameters
    const live = await whileRunning(rid, (s) => s.progress?.iteration >= 1)
    // the sheet's free parameters and its estimated initial state (per estimation record)
    expect(live.progress.estimates.map((e: { name: string }) => e.name).sort()).toEqual(['Cv', 'T[est]', 'UA', 'tau'])
    for (const e of live.progress.estimates) expect(Number.isFinite(e.value)).toBe(true)
    const c = await modeler.post(`${WS}/runs/${rid}/cancel`).set(CSRF)
    expect(c.status).toBe(200)
    const end = await waitForRun(modeler, rid, 10_000)
    expect(end.status).toBe('cancelled')
    if (end.result === null) expect(end.error).toMatch(/^Cancelled by request( before any start had finished with an estimate: there is no result to keep)?\.$/)
    else expect(end.result.stoppedEarly.finishedStarts).toBeGreaterThanOrEqual(1) // a start finished meanwhile
    const again = await modeler.post(`${WS}/runs/${rid}/cancel`).set(CSRF)
    expect(again.status).toBe(409)
  })

  it('keeps the best of the finished starts when a multi-start fit is cancelled', async () => {
    const r = await modeler.post(`${WS}/projects/${pid}/runs`).set(CSRF).send({ ...baseRun(), starts: 40, weighting: 'sheet' })
    const rid = r.body.id
    await whileRunning(rid, (s) => s.progress?.start >= 2)
    expect((await modeler.post(`${WS}/runs/${rid}/cancel`).set(CSRF)).status).toBe(200)
    const end = await waitForRun(modeler, rid, 20_000)
    expect(end.status).toBe('cancelled')
    expect(end.error).toMatch(/after \d+ of 40 starts: the result shown is the best of the finished starts/)
    const result = fitResult.parse(Object.fromEntries(Object.entries(end.result).filter(([k]) => k !== 'traces')))
    expect(result.stoppedEarly!.finishedStarts).toBeGreaterThanOrEqual(2)
    expect(result.stoppedEarly!.plannedStarts).toBe(40)
    expect(result.warnings.some((w) => w.startsWith('stopped by request after'))).toBe(true)
    // the kept estimate is the lowest cost among the finished starts
    const costs = result.starts.map((s) => s.sse).filter((c): c is number => c !== null)
    expect(result.sse).toBeCloseTo(Math.min(...costs), 9)
    expect(end.outcome).toBe(result.status)
    expect(end.result.traces.length).toBeGreaterThan(0)
    expect(end.sse).toBeCloseTo(result.sse!, 9)
  })

  it('reports live progress and estimates for a Nelder–Mead fit', async () => {
    const r = await modeler.post(`${WS}/projects/${pid}/runs`).set(CSRF).send({ ...baseRun(), method: 'nelder-mead', starts: 40, weighting: 'sheet' })
    const rid = r.body.id
    const live = await whileRunning(rid, (s) => (s.progress?.costHistory?.length ?? 0) >= 3 && (s.progress?.estimates?.length ?? 0) > 0)
    // the curve is the best cost so far: it never rises
    const h = live.progress.costHistory as number[]
    for (let i = 1; i < h.length; i++) expect(h[i]).toBeLessThanOrEqual(h[i - 1])
    // the sheet's free parameters and its estimated initial state (per estimation record)
    expect(live.progress.estimates.map((e: { name: string }) => e.name).sort()).toEqual(['Cv', 'T[est]', 'UA', 'tau'])
    expect((await modeler.post(`${WS}/runs/${rid}/cancel`).set(CSRF)).status).toBe(200)
    expect((await waitForRun(modeler, rid, 20_000)).status).toBe('cancelled')
  })

  it('cancels a queued run before it starts', async () => {
    const [a, b] = await Promise.all([
      modeler.post(`${WS}/projects/${pid}/runs`).set(CSRF).send({ ...baseRun(), starts: 3 }),
      modeler.post(`${WS}/projects/${pid}/runs`).set(CSRF).send({ ...baseRun(), starts: 3 }),
    ])
    const c = await modeler.post(`${WS}/runs/${b.body.id}/cancel`).set(CSRF)
    expect(c.status).toBe(200)
    expect((await waitForRun(modeler, b.body.id)).status).toBe('cancelled')
    expect((await waitForRun(modeler, a.body.id)).status).toBe('succeeded')
  })
})

describe('results hand-on', () => {
  it('saves the estimate as a parameter set', async () => {
    const r = await modeler.post(`${WS}/runs/${finished.id}/parameter-sets`).set(CSRF).send({ name: 'B2 as fitted' })
    expect(r.status).toBe(201)
    expect(r.body.values.Cv.value).toBe(finished.result.parameters[0].value)
    expect(r.body.values.Cv.unit).toBe('m^2.5/s')
    const list = await viewer.get(`${WS}/projects/${pid}/parameter-sets`)
    expect(list.body.parameterSets).toHaveLength(1)
  })

  it('publishes a new model version with the estimates; its note links the run', async () => {
    // a shipped template is read-only: publishing onto it is refused with the way out named
    const refused = await admin.post(`${WS}/runs/${finished.id}/publish`).set(CSRF).send({ note: 'calibrated on B2' })
    expect(refused.status).toBe(409)
    expect(refused.body.error.message).toMatch(/read-only: fork it/)
    // the same model as a workspace's own (no longer marked as a template) takes the new version
    const [{ template }] = await t.context.db.select({ template: models.template }).from(models).where(eq(models.id, tv.modelId))
    await t.context.db.update(models).set({ template: null }).where(eq(models.id, tv.modelId))
    const r = await admin.post(`${WS}/runs/${finished.id}/publish`).set(CSRF).send({ note: 'calibrated on B2' })
    await t.context.db.update(models).set({ template }).where(eq(models.id, tv.modelId))
    expect(r.status).toBe(201)
    expect(r.body.number).toBe(tv.number + 1)
    expect(r.body.fromRunId).toBe(finished.id)
    expect(r.body.note).toContain(`fit run #${finished.id}`)
    expect(r.body.changed).toEqual(['Cv', 'UA', 'tau'])
    const v = await viewer.get(`/api/workspaces/tinmoor/models/${tv.modelId}/versions/${r.body.number}`)
    expect(v.status).toBe(200)
    expect(v.body.fromRunId).toBe(finished.id)
    const cv = Number(/param\s+Cv\s*=\s*(\S+)/.exec(v.body.text)![1])
    expect(cv / finished.result.parameters[0].value).toBeCloseTo(1, 7)
    expect(v.body.text).toMatch(/param\s+Cv\s*=\s*\S+\s+\[m\^2\.5\/s\]\s+in \[1e-4, 1e-1\]/)
    // a second publish from the same (now old) version is refused: it would drop version 2
    const again = await admin.post(`${WS}/runs/${finished.id}/publish`).set(CSRF).send({})
    expect(again.status).toBe(409)
  })
})

describe('refusals', () => {
  it('a viewer or reviewer may not start, cancel or re-run fits (403)', async () => {
    for (const who of [viewer, reviewer]) {
      expect((await who.post(`${WS}/projects/${pid}/runs`).set(CSRF).send(baseRun())).status).toBe(403)
      expect((await who.post(`${WS}/runs/${finished.id}/rerun`).set(CSRF)).status).toBe(403)
      expect((await who.post(`${WS}/runs/${finished.id}/cancel`).set(CSRF)).status).toBe(403)
    }
    expect((await viewer.get(`${WS}/runs/${finished.id}`)).status).toBe(200)
  })

  it('refuses bad run requests with the field named', async () => {
    const cases: [Record<string, unknown>, RegExp][] = [
      [{ estimation: [] }, /at least one estimation dataset/],
      [{ estimation: [999999] }, /No dataset 999999/],
      [{ validation: [estId] }, /both estimation and validation/],
      [{ free: ['Cv', 'nope'] }, /no parameter named 'nope'/],
      [{ free: [{ name: 'UA', start: 9000 }] }, /free\.0\.start.*outside its bounds/],
      [{ free: [{ name: 'UA', lower: 10, upper: 5 }] }, /lower bound .* must be below/],
      [{ free: [{ name: 'A' }] }, /'A' has no bounds/],
      [{ mapping: { inputs: {}, outputs: { level: null, temp: null } } }, /no output is bound/],
      [{ method: 'simplex' }, /body\.method/],
      [{ version: 99 }, /version 99 not found/],
    ]
    for (const [patch, msg] of cases) {
      const r = await modeler.post(`${WS}/projects/${pid}/runs`).set(CSRF).send({ ...baseRun(), ...patch })
      expect(r.status, JSON.stringify(patch)).toBe(patch.version ? 404 : 400)
      expect(r.body.error.message, JSON.stringify(patch)).toMatch(msg)
    }
  })

  it('lists runs of the project and of the workspace', async () => {
    const a = await viewer.get(`${WS}/projects/${pid}/runs`)
    const b = await viewer.get(`${WS}/runs?projectId=${pid}`)
    // every run of the project, however many the other tests started
    const count = await t.context.database.pool.query('select count(*)::int as n from runs where project_id = $1', [pid])
    expect(a.body.runs.length).toBe(count.rows[0].n)
    expect(b.body.runs.map((r: { id: number }) => r.id)).toEqual(a.body.runs.map((r: { id: number }) => r.id))
    expect(a.body.runs.find((r: { id: number }) => r.id === finished.id).sse).toBe(finished.result.sse)
  })
})

describe('the demo project', () => {
  it('is created once, with estimation and validation data and a finished run', async () => {
    expect(await seedDemoProject(t.context.db)).toBe(true)
    expect(await seedDemoProject(t.context.db)).toBe(false)
    const projects = (await viewer.get(`${WS}/projects`)).body.projects
    const p = projects.find((x: { name: string }) => /demo/.test(x.name))
    expect(p).toBeTruthy()
    const ds = (await viewer.get(`${WS}/projects/${p.id}/datasets`)).body.datasets
    expect(ds.map((d: { purpose: string }) => d.purpose).sort()).toEqual(['estimation', 'validation'])
    const full = (await viewer.get(`${WS}/datasets/${ds[0].id}`)).body
    expect(full.notes[0]).toMatch(/^Invented data \(synthetic\)/)
    const runs = (await viewer.get(`${WS}/projects/${p.id}/runs`)).body.runs
    expect(runs).toHaveLength(1)
    expect(runs[0].status).toBe('succeeded')
  })
})

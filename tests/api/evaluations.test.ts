/**
 * Evaluation runs through the API: a calibrated model simulated on a fresh record with nothing free.
 * The records are seeded synthetic traces of the heated buffer vessel template made with the invented
 * constants BUFFER_TRUTH and known noise (0.5 cm on the level, 0.15 K on the temperature;
 * server/services/demo-project.ts), so with the true constants the RMSE must come out at the noise level,
 * and with the template's own (wrong) constants far above it.
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { CSRF, demo, makeTestApp, signedIn, type Agent, type TestApp } from '../helpers/app'
import { BUFFER_NOISE, BUFFER_TRUTH } from '../../server/services/demo-project'
import { parameterSets, users } from '../../server/db/schema'
import { evaluationResult } from '../../shared/api/evaluation'
import { eq } from 'drizzle-orm'
import { bufferProject, bufferTemplate, waitForRun, WS } from './runs-helpers'

let t: TestApp
let modeler: Agent
let viewer: Agent
let pid: number
let tv: Awaited<ReturnType<typeof bufferTemplate>>
let estId: number
let freshId: number
let bindingId: number
let truthSet: number

beforeAll(async () => {
  t = await makeTestApp('evaluations')
  modeler = await signedIn(t.app, demo.modeler)
  viewer = await signedIn(t.app, demo.viewer)
  ;({ tv, pid, ids: [estId, freshId], bindingId } = await bufferProject(t, modeler, 'Buffer vessel evaluation test', [
    { file: 'est.csv', purpose: 'estimation', csv: { seed: 41, label: 'evaluation test estimation' } },
    { file: 'fresh.csv', purpose: 'validation', csv: { seed: 42, label: 'evaluation test fresh record', T0: 300 } },
  ]))
  // a parameter set holding the generating constants (as a modeler would save from a good fit)
  const [u] = await t.context.db.select({ id: users.id }).from(users).where(eq(users.email, demo.modeler))
  const [ps] = await t.context.db.insert(parameterSets).values({
    projectId: pid, modelId: tv.modelId, name: 'generating constants (synthetic)', createdBy: u.id,
    values: { Cv: { value: BUFFER_TRUTH.Cv, unit: 'm^2.5/s' }, UA: { value: BUFFER_TRUTH.UA, unit: 'W/K' }, tau: { value: BUFFER_TRUTH.tau, unit: 's' }, 'T(0)[0]': { value: 305, unit: 'K' } },
  }).returning()
  truthSet = ps.id
}, 120_000)
afterAll(async () => { await t.close() })

const evaluate = (body: Record<string, unknown>) => modeler.post(`${WS}/projects/${pid}/evaluations`).set(CSRF)
  .send({ modelId: tv.modelId, version: tv.number, bindingId, datasets: [freshId], ...body })

describe('evaluation runs', () => {
  // the evaluation with the generating constants, made before any test: several tests read it
  let created: Awaited<ReturnType<typeof evaluate>>
  let run: Awaited<ReturnType<typeof waitForRun>>
  let evalId: number
  beforeAll(async () => {
    created = await evaluate({ parameterSetId: truthSet, start: 'estimate', name: 'truth on fresh record' })
    expect(created.status).toBe(201)
    run = await waitForRun(modeler, created.body.id)
    evalId = run.id
  }, 120_000)

  it('with the generating constants the errors are at the noise level; the records start from estimated states', async () => {
    const r = created
    expect(r.body.kind).toBe('evaluation')
    expect(r.body.settings.values).toEqual({ Cv: BUFFER_TRUTH.Cv, UA: BUFFER_TRUTH.UA, tau: BUFFER_TRUTH.tau })
    expect(r.body.provenance.datasets.map((d: { role: string }) => d.role)).toEqual(['evaluation'])
    expect(run.error).toBeNull()
    expect(run.status).toBe('succeeded')
    const { traces, ...rest } = run.result
    const res = evaluationResult.parse(rest)
    expect(res.start).toBe('estimated')
    expect(res.initialStates.map((s) => s.name)).toContain('T')
    expect(res.parameters.find((p) => p.name === 'Cv')).toMatchObject({ value: BUFFER_TRUTH.Cv, source: 'parameter-set' })
    expect(res.parameters.find((p) => p.name === 'A')).toMatchObject({ source: 'sheet' })
    const level = res.outputs.find((o) => o.name === 'level')!
    const temp = res.outputs.find((o) => o.name === 'temp')!
    // RMSE ≈ noise σ (the model is exact, so only the seeded noise remains): within 25 %
    expect(level.rmse! / (BUFFER_NOISE.levelCm / 100)).toBeGreaterThan(0.75)
    expect(level.rmse! / (BUFFER_NOISE.levelCm / 100)).toBeLessThan(1.25)
    expect(temp.rmse! / BUFFER_NOISE.tempC).toBeGreaterThan(0.75)
    expect(temp.rmse! / BUFFER_NOISE.tempC).toBeLessThan(1.25)
    expect(level.r2!).toBeGreaterThan(0.95)
    expect(level.validation).toBe(true)
    // residual checks of white seeded noise: the cumulative periodogram stays inside its band
    expect(level.residuals!.periodogram!.d).toBeLessThan(level.residuals!.periodogram!.band)
    expect(level.residuals!.normality!.test).toBe('jarque-bera')
    expect((traces as unknown[]).length).toBe(2)
    // the list shows it as an evaluation with its figure on unseen data
    const list = await modeler.get(`${WS}/projects/${pid}/runs`)
    const row = list.body.runs.find((x: { id: number }) => x.id === evalId)
    expect(row.kind).toBe('evaluation')
    expect(row.validationNrmse).toBeCloseTo((level.nrmse! + temp.nrmse!) / 2, 12)
  }, 120_000)

  it("with the template's own constants the errors are far larger", async () => {
    const r = await evaluate({ start: 'estimate' })
    expect(r.status).toBe(201)
    expect(r.body.settings.valuesFrom).toEqual({ kind: 'version', id: null, name: `version ${tv.number}` })
    const run = await waitForRun(modeler, r.body.id)
    expect(run.status).toBe('succeeded')
    const level = (run.result.outputs as { name: string; rmse: number }[]).find((o) => o.name === 'level')!
    expect(level.rmse).toBeGreaterThan(3 * BUFFER_NOISE.levelCm / 100)
  }, 120_000)

  it("takes a fit's estimates by its run, and runs again with the stored values", async () => {
    const fit = await modeler.post(`${WS}/projects/${pid}/runs`).set(CSRF)
      .send({ modelId: tv.modelId, version: tv.number, bindingId, estimation: [estId], weighting: 'sheet', seed: 3, name: 'fit for evaluation' })
    expect(fit.status).toBe(201)
    const done = await waitForRun(modeler, fit.body.id)
    expect(done.status).toBe('succeeded')
    const r = await evaluate({ sourceRunId: done.id })
    expect(r.status).toBe(201)
    const est = Object.fromEntries((done.result.parameters as { name: string; value: number }[]).map((p) => [p.name, p.value]))
    expect(r.body.settings.values).toEqual(est)
    expect(r.body.settings.valuesFrom).toMatchObject({ kind: 'run', id: done.id })
    const run = await waitForRun(modeler, r.body.id)
    expect(run.status).toBe('succeeded')
    const again = await modeler.post(`${WS}/runs/${run.id}/rerun`).set(CSRF)
    expect(again.status).toBe(201)
    expect(again.body.kind).toBe('evaluation')
    expect(again.body.settings.values).toEqual(est)
    const second = await waitForRun(modeler, again.body.id)
    expect(second.result.outputs[0].rmse).toBe(run.result.outputs[0].rmse)
    // an evaluation cannot be the source of another
    const chained = await evaluate({ sourceRunId: run.id })
    expect(chained.status).toBe(400)
    expect(chained.body.error.message).toMatch(/is an evaluation/)
  }, 240_000)

  it('exports CSV with the values used and the residual checks', async () => {
    const csv = await modeler.get(`${WS}/runs/${evalId}/export?format=csv`)
    expect(csv.status).toBe(200)
    expect(csv.text).toMatch(/# parameter values simulated with/)
    expect(csv.text).toMatch(/\r\nCv,m\^2\.5\/s,0\.0052,parameter-set\r\n/)
    expect(csv.text).toMatch(/# residual checks \(5 % level\)/)
    expect(csv.text).toMatch(/level,fresh,Normality: Jarque–Bera,/)
  })

  it('refuses what an evaluation cannot do and bad requests, naming the field', async () => {
    expect((await modeler.post(`${WS}/runs/${evalId}/parameter-sets`).set(CSRF).send({ name: 'x' })).status).toBe(409)
    expect((await modeler.get(`${WS}/runs/${evalId}/landscape?a=Cv&b=UA`)).status).toBe(409)
    const both = await evaluate({ parameterSetId: truthSet, sourceRunId: evalId })
    expect(both.status).toBe(400)
    expect(JSON.stringify(both.body.error)).toMatch(/sourceRunId/)
    const none = await evaluate({ datasets: [] })
    expect(none.status).toBe(400)
    expect(JSON.stringify(none.body.error)).toMatch(/datasets/)
    const missing = await evaluate({ datasets: [999_999] })
    expect(missing.status).toBe(400)
    expect(missing.body.error.message).toMatch(/No dataset 999999/)
    expect((await evaluate({ parameterSetId: 999_999 })).status).toBe(404)
    // a viewer may read but not start one
    expect((await viewer.post(`${WS}/projects/${pid}/evaluations`).set(CSRF).send({ modelId: tv.modelId, version: tv.number, datasets: [freshId] })).status).toBe(403)
  })

  it('refuses a parameter set whose units do not match the sheet', async () => {
    const [u] = await t.context.db.select({ id: users.id }).from(users).where(eq(users.email, demo.modeler))
    const [ps] = await t.context.db.insert(parameterSets).values({ projectId: pid, modelId: tv.modelId, name: 'wrong units', createdBy: u.id, values: { UA: { value: 0.4, unit: 'kW/K' } } }).returning()
    const r = await evaluate({ parameterSetId: ps.id })
    expect(r.status).toBe(400)
    expect(r.body.error.message).toMatch(/'UA' is in kW\/K there but in W\/K in the sheet/)
  })
})

/**
 * The run's lifecycle and the optimiser's outcome are two fields: a fit stopped at its iteration limit
 * is a finished run whose outcome says so, in the run, the runs list and the exports. Validation records
 * may start from initial states estimated on them (parameters frozen). Seeded synthetic traces of the
 * heated buffer vessel template (invented constants, server/services/demo-project.ts).
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { CSRF, demo, makeTestApp, signedIn, type Agent, type TestApp } from '../helpers/app'
import { fitResult } from '../../shared/api/fit'
import { bufferProject, bufferTemplate, waitForRun, WS } from './runs-helpers'

let t: TestApp
let modeler: Agent
let pid: number
let tv: Awaited<ReturnType<typeof bufferTemplate>>
let estId: number
let valId: number
let bindingId: number

beforeAll(async () => {
  t = await makeTestApp('runs-outcome')
  modeler = await signedIn(t.app, demo.modeler)
  ;({ tv, pid, ids: [estId, valId], bindingId } = await bufferProject(t, modeler, 'Outcome test', [
    { file: 'est.csv', purpose: 'estimation', csv: { seed: 21, label: 'outcome estimation' } },
    { file: 'val.csv', purpose: 'validation', csv: { seed: 22, label: 'outcome validation' } },
  ]))
})
afterAll(async () => { await t.close() })

const baseRun = () => ({ modelId: tv.modelId, version: tv.number, bindingId, estimation: [estId], validation: [valId], seed: 3 })

describe('run outcome', () => {
  it('an iteration limit of 1 gives a finished run whose outcome is iteration-limit, everywhere', async () => {
    const r = await modeler.post(`${WS}/projects/${pid}/runs`).set(CSRF).send({ ...baseRun(), name: 'cut short', tolerances: { maxIterations: 1 } })
    expect(r.status).toBe(201)
    expect(r.body.outcome).toBeNull()
    const run = await waitForRun(modeler, r.body.id)
    expect(run.status).toBe('succeeded')
    expect(run.outcome).toBe('iteration-limit')
    expect(run.convergedBy).toBeNull()
    expect(run.result.status).toBe('iteration-limit')
    expect(run.progress.message).toMatch(/stopped at the iteration limit/)
    const list = await modeler.get(`${WS}/runs?projectId=${pid}`)
    const row = list.body.runs.find((x: { id: number }) => x.id === run.id)
    expect(row).toMatchObject({ status: 'succeeded', outcome: 'iteration-limit' })
    const csv = await modeler.get(`${WS}/runs/${run.id}/export?format=csv`)
    expect(csv.text).toMatch(/# run finished; optimiser outcome: stopped at the iteration limit \(iteration limit \(1\)/)
    const json = await modeler.get(`${WS}/runs/${run.id}/export?format=json`)
    expect(json.body.run).toMatchObject({ status: 'succeeded', outcome: 'iteration-limit', outcomeText: 'stopped at the iteration limit' })
  })

  it('a full fit converges and names its test; validation initial states estimated on request', async () => {
    const r = await modeler.post(`${WS}/projects/${pid}/runs`).set(CSRF).send({ ...baseRun(), name: 'full', validationStart: 'estimate' })
    const run = await waitForRun(modeler, r.body.id)
    expect(run.status).toBe('succeeded')
    expect(run.outcome).toBe('converged')
    expect(['gradient', 'step', 'cost-change']).toContain(run.convergedBy)
    expect(run.settings.validationStart).toBe('estimate')
    const result = fitResult.parse(Object.fromEntries(Object.entries(run.result).filter(([k]) => k !== 'traces')))
    expect(result.validationStart).toBe('estimated')
    expect(result.validationInitialStates.map((v) => v.name)).toContain('T')
    const csv = await modeler.get(`${WS}/runs/${run.id}/export?format=csv`)
    expect(csv.text).toMatch(/# validation started from initial states estimated on each record \(parameters frozen\)/)
  })
})

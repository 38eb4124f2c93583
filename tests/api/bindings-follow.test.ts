/**
 * Bindings that follow versions: pinned, the latest, or the newest approved version; editing the
 * version, what it follows and its name; deleting it (runs keep their own mapping, and "run
 * again" of such a run still works); a fit may take any version of the binding's model.
 * The sheet and the trace are invented for this test (a first-order lag, a few samples).
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { CSRF, demo, makeTestApp, signedIn, type Agent, type TestApp } from '../helpers/app'
import { newProject, upload, WS } from './runs-helpers'

let t: TestApp
let modeler: Agent
let reviewer: Agent
let viewer: Agent
const sheet = (tau: number) => `model "Follow lag"
time [s]
input u = 0 [1]
param tau = ${tau} [s] in [1, 300]
state x = 0 [1]
dx/dt = (u - x) / tau
output y = x [1] sigma 0.01
`
// synthetic samples of a unit step through a 20 s lag (invented data, for the mapping only)
const csv = 'time [s],u [1],y [1]\n' + Array.from({ length: 30 }, (_, i) => `${i * 5},1,${(1 - Math.exp(-(i * 5) / 20)).toFixed(5)}`).join('\n') + '\n'

beforeAll(async () => {
  t = await makeTestApp('bindings_follow')
  modeler = await signedIn(t.app, demo.modeler)
  reviewer = await signedIn(t.app, demo.reviewer)
  viewer = await signedIn(t.app, demo.viewer)
})
afterAll(async () => { await t.close() })

describe('bindings that follow versions', () => {
  it('resolve to the pinned, latest or newest approved version; can be edited and deleted; runs take any version of the model', async () => {
    const m = await modeler.post(`${WS}/models`).set(CSRF).send({ title: 'Follow lag', text: sheet(30) })
    expect(m.status).toBe(201)
    const modelId = m.body.id as number
    const other = await modeler.post(`${WS}/models`).set(CSRF).send({ title: 'Follow lag (other)', text: sheet(40) })
    const pid = await newProject(modeler, 'Follow project')
    const ds = await upload(modeler, pid, csv, 'lag.csv', { purpose: 'estimation' })
    expect(ds.status).toBe(201)
    const bindings = `${WS}/projects/${pid}/bindings`

    const latest = await modeler.post(bindings).set(CSRF).send({ modelId, version: 1, follow: 'latest', name: 'lag, latest' })
    expect(latest.status).toBe(201)
    expect(latest.body).toMatchObject({ modelVersion: 1, follow: 'latest', resolvedVersion: 1, mapping: { inputs: { u: 'u' }, outputs: { y: 'y' } } })
    const approved = await modeler.post(bindings).set(CSRF).send({ modelId, version: 1, follow: 'approved', name: 'lag, approved' })
    expect(approved.body).toMatchObject({ follow: 'approved', resolvedVersion: null })
    const pinned = await modeler.post(bindings).set(CSRF).send({ modelId, version: 1, name: 'lag, pinned' })
    expect(pinned.body).toMatchObject({ follow: 'pinned', resolvedVersion: 1 })
    const bad = await modeler.post(bindings).set(CSRF).send({ modelId, version: 1, follow: 'newest' })
    expect(bad.status).toBe(400)
    expect(bad.body.error.message).toMatch(/follow/)

    expect((await modeler.post(`${WS}/models/${modelId}/versions`).set(CSRF).send({ text: sheet(25), note: 'faster start', baseVersion: 1 })).status).toBe(201)
    expect((await reviewer.post(`${WS}/models/${modelId}/versions/1/approve`).set(CSRF).send({})).status).toBe(200)
    const byName = async () => Object.fromEntries((await viewer.get(bindings)).body.bindings.map((b: { name: string }) => [b.name, b]))
    let list = await byName()
    expect(list['lag, latest'].resolvedVersion).toBe(2)
    expect(list['lag, approved'].resolvedVersion).toBe(1)
    expect(list['lag, pinned'].resolvedVersion).toBe(1)

    // edit: pin version 2, rename; a missing version is 404; a viewer is refused
    const edit = await modeler.put(`${bindings}/${pinned.body.id}`).set(CSRF).send({ version: 2, name: 'lag, pinned v2' })
    expect(edit.status).toBe(200)
    expect(edit.body).toMatchObject({ name: 'lag, pinned v2', modelVersion: 2, follow: 'pinned', resolvedVersion: 2 })
    expect((await modeler.put(`${bindings}/${pinned.body.id}`).set(CSRF).send({ version: 9 })).status).toBe(404)
    const nothing = await modeler.put(`${bindings}/${pinned.body.id}`).set(CSRF).send({})
    expect(nothing.status).toBe(400)
    expect(nothing.body.error.message).toMatch(/nothing to change/)
    expect((await viewer.put(`${bindings}/${pinned.body.id}`).set(CSRF).send({ follow: 'latest' })).status).toBe(403)
    const follow = await modeler.put(`${bindings}/${approved.body.id}`).set(CSRF).send({ follow: 'latest' })
    expect(follow.body).toMatchObject({ follow: 'latest', resolvedVersion: 2 })

    // a run takes any version of the binding's model; another model is refused with the field named
    const run = await modeler.post(`${WS}/projects/${pid}/runs`).set(CSRF).send({ modelId, version: 1, bindingId: latest.body.id, estimation: [ds.body.id], seed: 3 })
    expect(run.status).toBe(201)
    expect(run.body.modelVersion).toBe(1)
    expect(run.body.settings.bindingId).toBe(latest.body.id)
    const wrong = await modeler.post(`${WS}/projects/${pid}/runs`).set(CSRF).send({ modelId: other.body.id, version: 1, bindingId: latest.body.id, estimation: [ds.body.id] })
    expect(wrong.status).toBe(400)
    expect(wrong.body.error.message).toBe(`Binding ${latest.body.id} is for model ${modelId}, not model ${other.body.id}`)

    // delete: viewer refused; then gone; the run's "run again" uses the run's own mapping
    expect((await viewer.delete(`${bindings}/${latest.body.id}`).set(CSRF)).status).toBe(403)
    const del = await modeler.delete(`${bindings}/${latest.body.id}`).set(CSRF)
    expect(del.status).toBe(200)
    expect(del.body).toEqual({ deleted: true, id: latest.body.id })
    expect((await modeler.delete(`${bindings}/${latest.body.id}`).set(CSRF)).status).toBe(404)
    list = await byName()
    expect(Object.keys(list).sort()).toEqual(['lag, approved', 'lag, pinned v2'])
    // the "run again" form sends the repeated run and may change its choices (here the version)
    const form = await modeler.post(`${WS}/projects/${pid}/runs`).set(CSRF).send({ modelId, version: 2, mapping: run.body.settings.mapping, estimation: [ds.body.id], rerunOf: run.body.id, seed: 3 })
    expect(form.status).toBe(201)
    expect(form.body.settings).toMatchObject({ rerunOf: run.body.id, bindingId: null, seed: 3 })
    expect(form.body.modelVersion).toBe(2)
    const nowhere = await modeler.post(`${WS}/projects/${pid}/runs`).set(CSRF).send({ modelId, version: 2, estimation: [ds.body.id], rerunOf: 999999 })
    expect(nowhere.status).toBe(400)
    expect(nowhere.body.error.message).toBe('No run 999999 in this project to repeat')
    const again = await modeler.post(`${WS}/runs/${run.body.id}/rerun`).set(CSRF)
    expect(again.status).toBe(201)
    expect(again.body.settings).toMatchObject({ bindingId: null, rerunOf: run.body.id, seed: 3, mapping: { inputs: { u: 'u' }, outputs: { y: 'y' } } })
  })
})

/**
 * Multipart errors as 4xx with a message, UTF-8 file names, 404 for a foreign project on the run
 * lists, and deleting runs, datasets and projects (refused with the dependents named while something
 * depends on them). The traces are small invented examples.
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { eq } from 'drizzle-orm'
import { CSRF, demo, makeTestApp, signedIn, type Agent, type TestApp } from '../helpers/app'
import { newProject, upload, WS } from './runs-helpers'
import { insertRun, runFixture } from '../helpers/jobs'
import { runs } from '../../server/db/schema'

let t: TestApp
let modeler: Agent
let pid: number
const CSV = 't [s],level [m]\n0,1\n1,2\n2,3\n'

beforeAll(async () => {
  t = await makeTestApp('uploads_deletes', { uploadLimitBytes: 1024 })
  modeler = await signedIn(t.app, demo.modeler)
  pid = await newProject(modeler, 'Uploads and deletes (synthetic)')
})
afterAll(async () => { await t?.close() })

const url = () => `${WS}/projects/${pid}/datasets`

describe('multipart errors', () => {
  it('two file parts, another field name, too large and a malformed body answer 4xx with a message', async () => {
    const two = await modeler.post(url()).set(CSRF).attach('file', Buffer.from(CSV), 'a.csv').attach('file', Buffer.from(CSV), 'b.csv')
    expect(two.status).toBe(400)
    expect(two.body.error.message).toMatch(/one file per upload/)
    const other = await modeler.post(url()).set(CSRF).attach('data', Buffer.from(CSV), 'a.csv')
    expect(other.status).toBe(400)
    expect(other.body.error.message).toMatch(/Unexpected file field 'data'.*field 'file'/)
    const big = await modeler.post(url()).set(CSRF).attach('file', Buffer.from(CSV + '3,4\n'.repeat(400)), 'big.csv')
    expect(big.status).toBe(413)
    expect(big.body.error.message).toMatch(/limit of .*1024 bytes, PEWTER_UPLOAD_LIMIT_BYTES/)
    const broken = await modeler.post(url()).set(CSRF).set('Content-Type', 'multipart/form-data; boundary=xyz').send('--xyz\r\nContent-Disposition: form-data; name="file"; filename="a.csv"\r\n\r\n0,1')
    expect(broken.status).toBe(400)
    expect(broken.body.error.message).toMatch(/multipart|file/)
  })

  it('a non-ASCII file name is read as UTF-8', async () => {
    const r = await upload(modeler, pid, CSV, 'Füllstand Behälter °C.csv')
    expect(r.status, JSON.stringify(r.body)).toBe(201)
    expect(r.body.filename).toBe('Füllstand Behälter °C.csv')
    expect(r.body.name).toBe('Füllstand Behälter °C')
  })
})

describe('run lists and deletes', () => {
  it('a project or model of another workspace (or none) on the run lists answers 404', async () => {
    const other = await t.context.db.execute<{ id: number }>(`insert into workspaces (name, slug) values ('Elsewhere (synthetic)', 'elsewhere-${Date.now()}') returning id` as never)
    const [{ id: wsId }] = other.rows
    const p = await t.context.db.execute<{ id: number }>(`insert into projects (workspace_id, name) values (${wsId}, 'foreign') returning id` as never)
    const foreign = p.rows[0].id
    expect((await modeler.get(`${WS}/projects/${foreign}/runs`)).status).toBe(404)
    expect((await modeler.get(`${WS}/runs?projectId=${foreign}`)).status).toBe(404)
    expect((await modeler.get(`${WS}/runs?modelId=987654`)).status).toBe(404)
    expect((await modeler.get(`${WS}/runs?projectId=${pid}`)).status).toBe(200)
  })

  it('deletes are refused while something depends on them, naming it, and work afterwards', async () => {
    const proj = await newProject(modeler, 'To be deleted (synthetic)')
    const d = await upload(modeler, proj, CSV, 'parent.csv')
    expect(d.status).toBe(201)
    const child = await modeler.post(`${WS}/datasets/${d.body.id}/condition`).set(CSRF).send({ name: 'child', steps: [{ op: 'trim', from: 0, to: 1 }] })
    expect(child.status).toBe(201)
    // a run that fitted the child dataset
    const fx = await runFixture(t.context.db)
    const runId = await insertRun(t.context.db, { ...fx, project: { ...fx.project, id: proj } }, { steps: 1, stepMs: 1 })
    await t.context.db.update(runs).set({ settings: { name: 'Level fit', estimation: [child.body.id], validation: [] }, status: 'running' }).where(eq(runs.id, runId))

    const parentDel = await modeler.delete(`${WS}/datasets/${d.body.id}`).set(CSRF)
    expect(parentDel.status).toBe(409)
    expect(parentDel.body.error.message).toContain(`conditioned dataset ${child.body.id} 'child'`)
    const childDel = await modeler.delete(`${WS}/datasets/${child.body.id}`).set(CSRF)
    expect(childDel.status).toBe(409)
    expect(childDel.body.error.message).toContain(`run ${runId} 'Level fit'`)
    const projDel = await modeler.delete(`${WS}/projects/${proj}`).set(CSRF)
    expect(projDel.status).toBe(409)
    expect(projDel.body.error.message).toMatch(/1 fit run .*2 datasets/)
    const runningDel = await modeler.delete(`${WS}/runs/${runId}`).set(CSRF)
    expect(runningDel.status).toBe(409)
    expect(runningDel.body.error.message).toMatch(/running: cancel it first/)

    await t.context.db.update(runs).set({ status: 'failed' }).where(eq(runs.id, runId))
    const viewer = await signedIn(t.app, demo.viewer)
    expect((await viewer.delete(`${WS}/runs/${runId}`).set(CSRF)).status).toBe(403)
    expect((await modeler.delete(`${WS}/runs/${runId}`).set(CSRF)).status).toBe(204)
    expect((await modeler.get(`${WS}/runs/${runId}`)).status).toBe(404)
    expect((await modeler.delete(`${WS}/datasets/${child.body.id}`).set(CSRF)).status).toBe(204)
    expect((await modeler.delete(`${WS}/datasets/${d.body.id}`).set(CSRF)).status).toBe(204)
    expect((await modeler.delete(`${WS}/projects/${proj}`).set(CSRF)).status).toBe(204)
    expect((await modeler.get(`${WS}/projects/${proj}`)).status).toBe(404)
    expect((await modeler.delete(`${WS}/projects/${proj}`).set(CSRF)).status).toBe(404)
  })
})

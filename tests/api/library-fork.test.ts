/** Forks with lineage both ways, diffs between versions and against a fork's origin, and deletion. */
import { afterAll, beforeAll, beforeEach, describe, expect, it } from 'vitest'
import { CSRF, demo, makeTestApp, signedIn, type Agent, type TestApp } from '../helpers/app'
import { drainSheet, drainSheetV2, lagSheet } from './library-sheets'
import { diffReply, modelDetailDto } from '../../shared/api/models'

let t: TestApp
const as = {} as Record<'admin' | 'modeler' | 'modeler2' | 'reviewer' | 'viewer', Agent>
const base = `/api/workspaces/${demo.ws}/models`
let originId: number

/** A new origin model by the modeler: version 1 (drainSheet) and version 2 (drainSheetV2). */
async function newOrigin(): Promise<{ id: number; slug: string }> {
  const r = await as.modeler.post(base).set(CSRF).send({ title: 'Draining buffer vessel', description: 'invented', tags: ['vessel'], text: drainSheet })
  expect(r.status).toBe(201)
  const v2 = await as.modeler.post(`${base}/${r.body.id}/versions`).set(CSRF).send({ text: drainSheetV2, note: 'leak term', baseVersion: 1 })
  expect(v2.status).toBe(201)
  return { id: r.body.id, slug: r.body.slug }
}

beforeAll(async () => {
  t = await makeTestApp('library_fork')
  for (const k of ['admin', 'modeler', 'modeler2', 'reviewer', 'viewer'] as const) as[k] = await signedIn(t.app, demo[k])
  originId = (await newOrigin()).id
})
afterAll(async () => { await t.close() })

describe('forks', () => {
  // each test has its own origin and modeler2's fork of its version 1, so none depends on another's forks
  let origin: { id: number; slug: string }
  let originId: number
  let forkReply: { status: number; body: unknown }
  let forkId: number

  beforeEach(async () => {
    origin = await newOrigin()
    originId = origin.id
    forkReply = await as.modeler2.post(`${base}/${originId}/fork`).set(CSRF).send({ title: 'Vessel B-3 drain', version: 1 })
    expect(forkReply.status).toBe(201)
    forkId = (forkReply.body as { id: number }).id
  })

  it('forks a given version into a new model owned by the forking modeler, recording its origin', async () => {
    const f = modelDetailDto.parse(forkReply.body)
    expect(f.id).toBe(forkId)
    expect(f.owner.email).toBe(demo.modeler2)
    expect(f.maintainers.map((p) => p.email)).toEqual([demo.modeler2])
    expect(origin.slug).toMatch(/^draining-buffer-vessel(-\d+)?$/)
    expect(f.forkOf).toEqual({ id: originId, slug: origin.slug, title: 'Draining buffer vessel', version: 1 })
    expect(f.originLatestVersion).toBe(2)
    expect(f.tags).toEqual(['vessel'])
    expect(f.latestVersion).toBe(1)
    expect(f.versions[0].note).toBe('Forked from "Draining buffer vessel" version 1')
    expect((await as.modeler2.get(`${base}/${forkId}/versions/1`)).body.text).toBe(drainSheet)
    expect(f.can.publish).toBe(true)
  })

  it('lists the fork on its origin, and counts it in the library', async () => {
    const o = modelDetailDto.parse((await as.viewer.get(`${base}/${originId}`)).body)
    expect(o.forks).toEqual([expect.objectContaining({ id: forkId, title: 'Vessel B-3 drain', fromVersion: 1, owner: expect.objectContaining({ email: demo.modeler2 }) })])
    expect(o.forkCount).toBe(1)
    const list = (await as.viewer.get(base)).body.items
    expect(list.find((m: { id: number }) => m.id === originId).forkCount).toBe(1)
    expect(list.find((m: { id: number }) => m.id === forkId).forkOf.id).toBe(originId)
    const audit = await t.context.database.pool.query("select details from audit_log where action = 'model.forked' and target = $1", [`model:${forkId}`])
    expect(audit.rows[0].details).toEqual({ from: originId, version: 1 })
  })

  it('forks the latest version by default, and forks of forks keep their own origin', async () => {
    const r = await as.modeler.post(`${base}/${forkId}/fork`).set(CSRF).send({ title: 'Fork of fork' })
    expect(r.status).toBe(201)
    expect(r.body.forkOf).toMatchObject({ id: forkId, version: 1 })
    const latest = await as.admin.post(`${base}/${originId}/fork`).set(CSRF).send({ title: 'Admin fork' })
    expect(latest.body.forkOf.version).toBe(2)
  })

  it('lets viewers and reviewers not fork, and refuses a missing version', async () => {
    expect((await as.viewer.post(`${base}/${originId}/fork`).set(CSRF).send({ title: 'x' })).status).toBe(403)
    expect((await as.reviewer.post(`${base}/${originId}/fork`).set(CSRF).send({ title: 'x' })).status).toBe(403)
    expect((await as.modeler.post(`${base}/${originId}/fork`).set(CSRF).send({ title: 'x', version: 42 })).status).toBe(404)
    const noTitle = await as.modeler.post(`${base}/${originId}/fork`).set(CSRF).send({})
    expect(noTitle.status).toBe(400)
    expect(noTitle.body.error.details[0].path).toBe('body.title')
  })

  it('diffs a fork against its origin\'s latest version', async () => {
    const r = await as.viewer.get(`${base}/${forkId}/diff`).query({ fromModel: originId, from: 'latest', to: 'latest' })
    expect(r.status).toBe(200)
    const d = diffReply.parse(r.body)
    expect(d.from).toMatchObject({ model: { id: originId }, version: 2 })
    expect(d.to).toMatchObject({ model: { id: forkId }, version: 1 })
    // origin v2 → fork v1 is the known pair backwards: the leak parameter is removed
    expect(d.parameters.find((p) => p.name === 'leak')?.change).toBe('removed')
    expect(d.added).toBe(3)
    expect(d.removed).toBe(4)
  })
})

describe('the diff of a known pair', () => {
  it('gives the exact line diff and the parameter changes between version 1 and 2', async () => {
    const r = await as.viewer.get(`${base}/${originId}/diff`).query({ from: 1, to: 2 })
    expect(r.status).toBe(200)
    const d = diffReply.parse(r.body)
    const compact = d.lines.map((l) => `${l.kind === 'same' ? ' ' : l.kind === 'added' ? '+' : '-'}${l.oldLine ?? '_'}:${l.newLine ?? '_'} ${l.text}`)
    expect(compact).toEqual([
      ' 1:1 # Invented example: a buffer vessel draining through an orifice (Tinmoor Works, fictional)',
      ' 2:2 model "Draining buffer vessel"',
      ' 3:3 time [s]',
      ' 4:4 input q_in = 1e-3 [m^3/s] linear "feed flow"',
      '-5:_ param A = 1.5 [m^2] fixed "cross-section"',
      '-6:_ param k = 2e-3 [m^2.5/s] in [1e-4, 1e-1] "outlet coefficient"',
      '+_:5 param A = 15000 [cm^2] fixed "cross-section"',
      '+_:6 param k = 3e-3 [m^2.5/s] in [1e-4, 5e-2] "outlet coefficient"',
      '+_:7 param leak = 1e-5 [m^3/s] in [0, 1e-3] "leak flow"',
      ' 7:8 state h = 0.5 [m] "level"',
      '-8:_ dh/dt = (q_in - k * sqrt(max(h, 0))) / A',
      '+_:9 dh/dt = (q_in - leak - k * sqrt(max(h, 0))) / A',
      ' 9:10 output level = h [m] sigma 0.01',
    ])
    expect(d.added).toBe(4)
    expect(d.removed).toBe(3)
    expect(d.parameters.map((p) => [p.name, p.change, p.fields])).toEqual([
      ['A', 'changed', ['value', 'unit']],
      ['k', 'changed', ['value', 'bounds']],
      ['leak', 'added', []],
    ])
    const k = d.parameters.find((p) => p.name === 'k')!
    expect([k.before?.value, k.before?.upper, k.after?.value, k.after?.upper]).toEqual([2e-3, 1e-1, 3e-3, 5e-2])
  })

  it('diffs a version with itself as no change, and validates the query', async () => {
    const same = diffReply.parse((await as.viewer.get(`${base}/${originId}/diff`).query({ from: 2, to: 2 })).body)
    expect(same.added + same.removed).toBe(0)
    expect(same.parameters).toEqual([])
    const bad = await as.viewer.get(`${base}/${originId}/diff`).query({ from: 'first' })
    expect(bad.status).toBe(400)
    expect(bad.body.error.details[0].path).toBe('query.from')
    expect((await as.viewer.get(`${base}/${originId}/diff`).query({ from: 9 })).status).toBe(404)
  })
})

describe('deleting a model', () => {
  it('is for admins only', async () => {
    const r = await as.modeler.post(base).set(CSRF).send({ title: 'Short-lived', text: lagSheet })
    for (const who of ['viewer', 'reviewer', 'modeler', 'modeler2'] as const) {
      expect((await as[who].delete(`${base}/${r.body.id}`).set(CSRF)).status).toBe(403)
    }
    expect((await as.admin.delete(`${base}/${r.body.id}`).set(CSRF)).status).toBe(200)
    expect((await as.viewer.get(`${base}/${r.body.id}`)).status).toBe(404)
  })

  it('is refused with 409 and a reason while fit runs use its versions, and works once they are gone', async () => {
    const m = await as.modeler.post(base).set(CSRF).send({ title: 'In use', text: lagSheet })
    const id = m.body.id
    await as.modeler.post(`${base}/${id}/versions`).set(CSRF).send({ text: lagSheet.replace('tau = 12', 'tau = 15'), note: 'slower probe', baseVersion: 1 })
    const pool = t.context.database.pool
    const ws = await pool.query('select id from workspaces where slug = $1', [demo.ws])
    const p = await pool.query("insert into projects (workspace_id, name) values ($1, 'Probe study (invented)') returning id", [ws.rows[0].id])
    const run = await pool.query("insert into runs (workspace_id, project_id, model_id, model_version, status, settings, provenance) values ($1, $2, $3, 2, 'succeeded', '{}', '{}') returning id",
      [ws.rows[0].id, p.rows[0].id, id])
    const r = await as.admin.delete(`${base}/${id}`).set(CSRF)
    expect(r.status).toBe(409)
    expect(r.body.error.message).toMatch(/1 fit run uses version 2/)
    expect(r.body.error.details).toEqual({ runs: 1, versions: [2] })
    // nothing was removed
    const v = await pool.query('select count(*)::int as n from model_versions where model_id = $1', [id])
    expect(v.rows[0].n).toBe(2)
    await pool.query('delete from runs where id = $1', [run.rows[0].id])
    expect((await as.admin.delete(`${base}/${id}`).set(CSRF)).status).toBe(200)
    const gone = await pool.query('select (select count(*) from models where id = $1)::int as m, (select count(*) from model_versions where model_id = $1)::int as v', [id])
    expect(gone.rows[0]).toEqual({ m: 0, v: 0 })
    const audit = await pool.query("select details from audit_log where action = 'model.deleted' and target = $1", [`model:${id}`])
    expect(audit.rows[0].details).toEqual({ title: 'In use' })
  })

  it('leaves forks of a deleted origin in place, without an origin to show', async () => {
    const o = await as.modeler.post(base).set(CSRF).send({ title: 'Origin to go', text: lagSheet })
    const f = await as.modeler2.post(`${base}/${o.body.id}/fork`).set(CSRF).send({ title: 'Survivor' })
    expect((await as.admin.delete(`${base}/${o.body.id}`).set(CSRF)).status).toBe(200)
    const s = (await as.viewer.get(`${base}/${f.body.id}`)).body
    expect(s.forkOf).toBeNull()
    expect(s.originLatestVersion).toBeNull()
    expect(s.latestVersion).toBe(1)
  })
})

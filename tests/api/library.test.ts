/**
 * The model library API: every route against every role, foreign workspaces, validation, drafts,
 * approval, list filters and the stateless sheet check.
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import request from 'supertest'
import { CSRF, demo, makeTestApp, signedIn, type Agent, type TestApp } from '../helpers/app'
import { signUpVerified } from '../helpers/signup'
import { drainSheet, drainSheetV2, drainSheetWithError, lagSheet } from './library-sheets'
import { checkReply, listModelsReply, modelDetailDto, versionDto } from '../../shared/api/models'

let t: TestApp
const as: Record<'admin' | 'modeler' | 'modeler2' | 'reviewer' | 'viewer', Agent> = {} as never
const base = `/api/workspaces/${demo.ws}/models`
let modelId: number

beforeAll(async () => {
  t = await makeTestApp('library')
  for (const k of ['admin', 'modeler', 'modeler2', 'reviewer', 'viewer'] as const) as[k] = await signedIn(t.app, demo[k])
  const r = await as.modeler.post(base).set(CSRF).send({ title: 'Draining buffer vessel', description: 'Level of vessel B-2 (invented).', tags: ['Vessel', 'level'], text: drainSheet })
  expect(r.status).toBe(201)
  modelId = r.body.id
})
afterAll(async () => { await t.close() })

async function userId(email: string): Promise<number> {
  const r = await t.context.database.pool.query('select id from users where email = $1', [email])
  return r.rows[0].id
}

describe('creating a model', () => {
  it('creates version 1 owned and maintained by the creator, with the parsed summary', async () => {
    const r = await as.modeler.get(`${base}/${modelId}`)
    expect(r.status).toBe(200)
    const m = modelDetailDto.parse(r.body)
    expect(m.slug).toBe('draining-buffer-vessel')
    expect(m.tags).toEqual(['vessel', 'level'])
    expect(m.owner.email).toBe(demo.modeler)
    expect(m.maintainers.map((p) => p.email)).toEqual([demo.modeler])
    expect(m.latestVersion).toBe(1)
    expect(m.status).toBe('draft')
    expect(m.versions).toHaveLength(1)
    expect(m.versions[0].author.email).toBe(demo.modeler)
    expect(m.can).toEqual({ publish: true, edit: true, approve: false, fork: true, remove: false })
    const v = versionDto.parse((await as.viewer.get(`${base}/${modelId}/versions/1`)).body)
    expect(v.text).toBe(drainSheet)
    expect(v.summary.parameters.map((p) => [p.name, p.value, p.unit, p.lower, p.upper, p.fixed])).toEqual([
      ['A', 1.5, 'm^2', null, null, true],
      ['k', 2e-3, 'm^2.5/s', 1e-4, 1e-1, false],
    ])
    expect(v.summary.states.map((s) => s.name)).toEqual(['h'])
    expect(v.summary.inputs.map((s) => s.name)).toEqual(['q_in'])
    expect(v.summary.outputs.map((s) => s.name)).toEqual(['level'])
  })

  it('gives a second model with the same title a distinct slug', async () => {
    const r = await as.modeler2.post(base).set(CSRF).send({ title: 'Draining buffer vessel', text: lagSheet })
    expect(r.status).toBe(201)
    expect(r.body.slug).toBe('draining-buffer-vessel-2')
  })

  it('refuses a sheet with errors (400 with the diagnostics) and stores nothing', async () => {
    const before = (await as.admin.get(base)).body.total
    const r = await as.modeler.post(base).set(CSRF).send({ title: 'Broken', text: drainSheetWithError })
    expect(r.status).toBe(400)
    expect(r.body.error.message).toMatch(/line 8, column 10: unknown name 'q_inn'/)
    expect(r.body.error.details.diagnostics).toContainEqual(expect.objectContaining({ line: 8, column: 10, endColumn: 15, severity: 'error' }))
    expect((await as.admin.get(base)).body.total).toBe(before)
  })

  it('answers a malformed body with 400 and field paths', async () => {
    const r = await as.modeler.post(base).set(CSRF).send({ title: '', tags: ['ok', '!!'], text: 5 })
    expect(r.status).toBe(400)
    const paths = r.body.error.details.map((d: { path: string }) => d.path)
    expect(paths).toEqual(expect.arrayContaining(['body.title', 'body.tags.1', 'body.text']))
  })

  it('lets only modelers and admins create', async () => {
    for (const who of ['viewer', 'reviewer'] as const) {
      const r = await as[who].post(base).set(CSRF).send({ title: 'Nope', text: lagSheet })
      expect(r.status).toBe(403)
    }
    const r = await as.admin.post(base).set(CSRF).send({ title: 'Admin lag', text: lagSheet, tags: ['probe'] })
    expect(r.status).toBe(201)
  })

  it('asks for a sign-in first (401)', async () => {
    expect((await request(t.app).get(base)).status).toBe(401)
    expect((await request(t.app).post(base).set(CSRF).send({ title: 'x', text: lagSheet })).status).toBe(401)
  })
})

describe('reading and listing', () => {
  it('lets every role read the list, a model and a version', async () => {
    for (const who of ['admin', 'modeler', 'modeler2', 'reviewer', 'viewer'] as const) {
      expect((await as[who].get(base)).status).toBe(200)
      expect((await as[who].get(`${base}/${modelId}`)).status).toBe(200)
      expect((await as[who].get(`${base}/${modelId}/versions/1`)).status).toBe(200)
    }
  })

  it('answers 404 for a version that does not exist and 400 for a bad id', async () => {
    expect((await as.viewer.get(`${base}/${modelId}/versions/99`)).status).toBe(404)
    expect((await as.viewer.get(`${base}/999999`)).status).toBe(404)
    const bad = await as.viewer.get(`${base}/abc`)
    expect(bad.status).toBe(400)
    expect(bad.body.error.details[0].path).toBe('params.id')
  })

  it('filters by search text, tag, owner and status, and pages', async () => {
    const all = listModelsReply.parse((await as.viewer.get(base)).body)
    expect(all.total).toBeGreaterThanOrEqual(3)
    expect(all.tags).toEqual(expect.arrayContaining(['vessel', 'level', 'probe']))
    expect(all.owners.map((o) => o.email)).toEqual(expect.arrayContaining([demo.modeler, demo.modeler2, demo.admin]))

    const byText = (await as.viewer.get(base).query({ q: 'B-2' })).body
    expect(byText.items.map((m: { id: number }) => m.id)).toEqual([modelId])
    const byTag = (await as.viewer.get(base).query({ tag: 'probe' })).body
    expect(byTag.items.map((m: { title: string }) => m.title)).toEqual(['Admin lag'])
    const mine = (await as.modeler2.get(base).query({ owner: 'me' })).body
    expect(mine.items.every((m: { owner: { email: string } }) => m.owner.email === demo.modeler2)).toBe(true)
    expect(mine.total).toBe(1)
    const byOwner = (await as.viewer.get(base).query({ owner: await userId(demo.modeler) })).body
    expect(byOwner.items.map((m: { id: number }) => m.id)).toContain(modelId)
    expect(byOwner.items.every((m: { owner: { email: string } }) => m.owner.email === demo.modeler)).toBe(true)

    const p1 = (await as.viewer.get(base).query({ pageSize: 1, page: 1 })).body
    const p2 = (await as.viewer.get(base).query({ pageSize: 1, page: 2 })).body
    expect(p1.items).toHaveLength(1)
    expect(p2.items).toHaveLength(1)
    expect(p1.items[0].id).not.toBe(p2.items[0].id)
    expect(p1.total).toBe(all.total)
    const beyond = (await as.viewer.get(base).query({ pageSize: 1, page: 9999 })).body
    expect(beyond.items).toEqual([])
    expect(beyond.total).toBe(all.total)

    const badStatus = await as.viewer.get(base).query({ status: 'published' })
    expect(badStatus.status).toBe(400)
    expect(badStatus.body.error.details[0].path).toBe('query.status')
  })
})

describe('drafts', () => {
  it('keeps one autosaved draft per user and model, even with errors, visible only to its author', async () => {
    const a = await as.modeler.put(`${base}/${modelId}/draft`).set(CSRF).send({ text: drainSheetWithError })
    expect(a.status).toBe(200)
    expect(a.body.baseVersion).toBe(1)
    const b = await as.modeler.put(`${base}/${modelId}/draft`).set(CSRF).send({ text: drainSheetV2, baseVersion: 1 })
    expect(b.status).toBe(200)
    const rows = await t.context.database.pool.query('select count(*)::int as n from model_drafts where model_id = $1', [modelId])
    expect(rows.rows[0].n).toBe(1)
    expect((await as.modeler.get(`${base}/${modelId}`)).body.draft.text).toBe(drainSheetV2)
    expect((await as.modeler2.get(`${base}/${modelId}`)).body.draft).toBeNull()
  })

  it('refuses a draft on a version that does not exist, and drafts from viewers and reviewers', async () => {
    const r = await as.modeler.put(`${base}/${modelId}/draft`).set(CSRF).send({ text: lagSheet, baseVersion: 7 })
    expect(r.status).toBe(400)
    expect(r.body.error.details[0].path).toBe('body.baseVersion')
    expect((await as.viewer.put(`${base}/${modelId}/draft`).set(CSRF).send({ text: lagSheet })).status).toBe(403)
    expect((await as.reviewer.put(`${base}/${modelId}/draft`).set(CSRF).send({ text: lagSheet })).status).toBe(403)
  })

  it('discards a draft', async () => {
    await as.modeler2.put(`${base}/${modelId}/draft`).set(CSRF).send({ text: lagSheet })
    expect((await as.modeler2.get(`${base}/${modelId}`)).body.draft).not.toBeNull()
    expect((await as.modeler2.delete(`${base}/${modelId}/draft`).set(CSRF)).status).toBe(204)
    expect((await as.modeler2.get(`${base}/${modelId}`)).body.draft).toBeNull()
  })
})

describe('publishing, maintainers and approval', () => {
  it('publishes version 2 for a maintainer, clears their draft and keeps version 1 unchanged', async () => {
    const r = await as.modeler.post(`${base}/${modelId}/versions`).set(CSRF).send({ text: drainSheetV2, note: 'Added a leak term', baseVersion: 1 })
    expect(r.status).toBe(201)
    const v = versionDto.parse(r.body)
    expect(v.number).toBe(2)
    expect(v.note).toBe('Added a leak term')
    expect(v.author.email).toBe(demo.modeler)
    expect(v.status).toBe('draft')
    expect((await as.modeler.get(`${base}/${modelId}`)).body.draft).toBeNull()
    expect((await as.viewer.get(`${base}/${modelId}/versions/1`)).body.text).toBe(drainSheet)
    expect((await as.viewer.get(`${base}/${modelId}/versions/latest`)).body.number).toBe(2)
  })

  it('requires a change note', async () => {
    const r = await as.modeler.post(`${base}/${modelId}/versions`).set(CSRF).send({ text: drainSheetV2, note: '  ', baseVersion: 2 })
    expect(r.status).toBe(400)
    expect(r.body.error.details[0].path).toBe('body.note')
  })

  it('refuses a sheet with errors with 400 and every diagnostic, creating nothing', async () => {
    const r = await as.modeler.post(`${base}/${modelId}/versions`).set(CSRF).send({ text: drainSheetWithError, note: 'typo', baseVersion: 2 })
    expect(r.status).toBe(400)
    expect(r.body.error.details.diagnostics).toEqual([
      {
        line: 8, column: 10, endColumn: 15, severity: 'error', message: "unknown name 'q_inn' (did you mean 'q_in'?)",
        fix: { title: "Change to 'q_in'", range: { line: 8, column: 10, endColumn: 15 }, text: 'q_in' },
      },
    ])
    expect((await as.viewer.get(`${base}/${modelId}`)).body.latestVersion).toBe(2)
  })

  it('answers a publish on an old base with 409 and the latest version', async () => {
    const r = await as.modeler.post(`${base}/${modelId}/versions`).set(CSRF).send({ text: drainSheet, note: 'stale', baseVersion: 1 })
    expect(r.status).toBe(409)
    expect(r.body.error.code).toBe('conflict')
    expect(r.body.error.details.latest.number).toBe(2)
    expect(r.body.error.details.latest.text).toBe(drainSheetV2)
    const future = await as.modeler.post(`${base}/${modelId}/versions`).set(CSRF).send({ text: drainSheet, note: 'future', baseVersion: 5 })
    expect(future.status).toBe(400)
  })

  it('lets only maintainers (and admins) publish; the owner adds maintainers', async () => {
    const refused = await as.modeler2.post(`${base}/${modelId}/versions`).set(CSRF).send({ text: drainSheet, note: 'revert', baseVersion: 2 })
    expect(refused.status).toBe(403)
    expect(refused.body.error.message).toMatch(/do not maintain/)
    expect((await as.modeler2.get(`${base}/${modelId}`)).body.can.publish).toBe(false)
    for (const who of ['viewer', 'reviewer'] as const) {
      expect((await as[who].post(`${base}/${modelId}/versions`).set(CSRF).send({ text: drainSheet, note: 'x', baseVersion: 2 })).status).toBe(403)
    }
    // only the owner or an admin chooses maintainers; maintainers must be able to write
    expect((await as.modeler2.put(`${base}/${modelId}/maintainers`).set(CSRF).send({ userIds: [await userId(demo.modeler2)] })).status).toBe(403)
    const rev = await as.modeler.put(`${base}/${modelId}/maintainers`).set(CSRF).send({ userIds: [await userId(demo.reviewer)] })
    expect(rev.status).toBe(400)
    expect(rev.body.error.details[0].path).toBe('body.userIds.0')
    const ok = await as.modeler.put(`${base}/${modelId}/maintainers`).set(CSRF).send({ userIds: [await userId(demo.modeler2)] })
    expect(ok.status).toBe(200)
    expect(ok.body.maintainers.map((p: { email: string }) => p.email).sort()).toEqual([demo.modeler, demo.modeler2].sort())
    const v3 = await as.modeler2.post(`${base}/${modelId}/versions`).set(CSRF).send({ text: drainSheet, note: 'Back to the simple outlet', baseVersion: 2 })
    expect(v3.status).toBe(201)
    expect(v3.body.number).toBe(3)
    const v4 = await as.admin.post(`${base}/${modelId}/versions`).set(CSRF).send({ text: drainSheetV2, note: 'Admin re-adds the leak', baseVersion: 3 })
    expect(v4.status).toBe(201)
    expect(v4.body.number).toBe(4)
  })

  it('lets maintainers edit the title, description and tags', async () => {
    const r = await as.modeler2.patch(`${base}/${modelId}`).set(CSRF).send({ description: 'Level of vessel B-2 (invented), with leak.', tags: ['vessel', 'level', 'leak'] })
    expect(r.status).toBe(200)
    expect(r.body.tags).toEqual(['vessel', 'level', 'leak'])
    expect((await as.viewer.patch(`${base}/${modelId}`).set(CSRF).send({ title: 'x' })).status).toBe(403)
    const empty = await as.modeler.patch(`${base}/${modelId}`).set(CSRF).send({})
    expect(empty.status).toBe(400)
  })

  it('lets reviewers and admins approve a version, once', async () => {
    for (const who of ['viewer', 'modeler', 'modeler2'] as const) {
      expect((await as[who].post(`${base}/${modelId}/versions/4/approve`).set(CSRF)).status).toBe(403)
    }
    const r = await as.reviewer.post(`${base}/${modelId}/versions/4/approve`).set(CSRF)
    expect(r.status).toBe(200)
    expect(r.body.status).toBe('approved')
    expect(r.body.approvedBy.email).toBe(demo.reviewer)
    expect(typeof r.body.approvedAt).toBe('string')
    expect(r.body.text).toBe(drainSheetV2)
    expect((await as.reviewer.post(`${base}/${modelId}/versions/4/approve`).set(CSRF)).status).toBe(409)
    expect((await as.admin.post(`${base}/${modelId}/versions/2/approve`).set(CSRF)).status).toBe(200)
    expect((await as.reviewer.post(`${base}/${modelId}/versions/99/approve`).set(CSRF)).status).toBe(404)

    const m = (await as.viewer.get(`${base}/${modelId}`)).body
    expect(m.status).toBe('approved')
    expect(m.versions.map((v: { number: number; status: string }) => [v.number, v.status])).toEqual([[4, 'approved'], [3, 'draft'], [2, 'approved'], [1, 'draft']])
    const approved = (await as.viewer.get(base).query({ status: 'approved' })).body
    expect(approved.items.map((x: { id: number }) => x.id)).toEqual([modelId])
    expect(approved.items[0]).toMatchObject({ latestVersion: 4, status: 'approved', forkCount: 0 })
  })

  it('records audit events for create, publish and approve', async () => {
    const r = await t.context.database.pool.query("select action from audit_log where target = $1 order by id", [`model:${modelId}`])
    const actions = r.rows.map((x) => x.action)
    expect(actions[0]).toBe('model.created')
    expect(actions.filter((a) => a === 'model.published')).toHaveLength(3)
    expect(actions.filter((a) => a === 'model.approved')).toHaveLength(2)
  })
})

describe('another workspace', () => {
  it('answers 404 for a foreign workspace and for its models reached through ours', async () => {
    const { agent: outsider, me } = await signUpVerified(t, { email: 'outsider@example.org', password: 'long-enough-1', name: 'Outsider' })
    const ows = me.workspaces[0].slug
    const theirs = await outsider.post(`/api/workspaces/${ows}/models`).set(CSRF).send({ title: 'Their lag', text: lagSheet })
    expect(theirs.status).toBe(201)
    const tid = theirs.body.id

    // demo users cannot reach the foreign workspace at all
    expect((await as.admin.get(`/api/workspaces/${ows}/models`)).status).toBe(404)
    expect((await as.admin.get(`/api/workspaces/${ows}/models/${tid}`)).status).toBe(404)
    // nor its model through their own workspace, for any route
    expect((await as.admin.get(`${base}/${tid}`)).status).toBe(404)
    expect((await as.admin.get(`${base}/${tid}/versions/1`)).status).toBe(404)
    expect((await as.admin.put(`${base}/${tid}/draft`).set(CSRF).send({ text: lagSheet })).status).toBe(404)
    expect((await as.admin.post(`${base}/${tid}/versions`).set(CSRF).send({ text: lagSheet, note: 'x', baseVersion: 1 })).status).toBe(404)
    expect((await as.admin.post(`${base}/${tid}/versions/1/approve`).set(CSRF)).status).toBe(404)
    expect((await as.admin.post(`${base}/${tid}/fork`).set(CSRF).send({ title: 'stolen' })).status).toBe(404)
    expect((await as.admin.get(`${base}/${tid}/diff`).query({ from: 1 })).status).toBe(404)
    expect((await as.admin.get(`${base}/${modelId}/diff`).query({ from: 1, fromModel: tid })).status).toBe(404)
    expect((await as.admin.delete(`${base}/${tid}`).set(CSRF)).status).toBe(404)
    expect((await as.admin.get(base)).body.items.map((m: { id: number }) => m.id)).not.toContain(tid)
    // and their model is intact
    expect((await outsider.get(`/api/workspaces/${ows}/models/${tid}`)).body.latestVersion).toBe(1)
  })
})

describe('POST /api/check', () => {
  it('returns diagnostics and the summary without saving anything', async () => {
    const before = await t.context.database.pool.query('select (select count(*) from models)::int as m, (select count(*) from model_versions)::int as v')
    const ok = checkReply.parse((await as.viewer.post('/api/check').set(CSRF).send({ text: drainSheetV2 })).body)
    expect(ok.ok).toBe(true)
    expect(ok.diagnostics).toEqual([])
    expect(ok.summary?.parameters.map((p) => p.name)).toEqual(['A', 'k', 'leak'])
    const bad = checkReply.parse((await as.viewer.post('/api/check').set(CSRF).send({ text: drainSheetWithError })).body)
    expect(bad.ok).toBe(false)
    expect(bad.diagnostics[0]).toMatchObject({ line: 8, column: 10, severity: 'error' })
    const after = await t.context.database.pool.query('select (select count(*) from models)::int as m, (select count(*) from model_versions)::int as v')
    expect(after.rows[0]).toEqual(before.rows[0])
  })

  it('carries the fix of a problem with one obvious repair (range and replacement text)', async () => {
    // invented sheet of the Tinmoor Works demo: a misspelt unit, a misspelt keyword
    const text = 'model "sump"\nparam k = 0.2 [1/s] in [0, 1]\nstat h = 1 [m]\ndh/dt = -k * h\noutput level = h [kw]'
    const r = await as.viewer.post('/api/check').set(CSRF).send({ text })
    expect(r.status).toBe(200)
    const reply = checkReply.parse(r.body)
    expect(reply.ok).toBe(false)
    expect(reply.diagnostics).toEqual([
      { line: 3, column: 1, endColumn: 5, severity: 'error', message: "unknown keyword 'stat'; did you mean 'state'?", fix: { title: "Change to 'state'", range: { line: 3, column: 1, endColumn: 5 }, text: 'state' } },
      { line: 5, column: 18, endColumn: 22, severity: 'error', message: "unknown unit 'kw'; did you mean 'kW'?", fix: { title: "Change to 'kW'", range: { line: 5, column: 19, endColumn: 21 }, text: 'kW' } },
    ])
    // a diagnostic without an obvious repair has no fix
    const plain = checkReply.parse((await as.viewer.post('/api/check').set(CSRF).send({ text: text.replace('[kw]', '[furlongs]').replace('stat ', 'state ') })).body)
    expect(plain.diagnostics).toEqual([expect.objectContaining({ line: 5, message: "unknown unit 'furlongs'" })])
    expect(plain.diagnostics[0].fix).toBeUndefined()
  })

  it('needs a sign-in and a text', async () => {
    expect((await request(t.app).post('/api/check').set(CSRF).send({ text: lagSheet })).status).toBe(401)
    const r = await as.viewer.post('/api/check').set(CSRF).send({})
    expect(r.status).toBe(400)
    expect(r.body.error.details[0].path).toBe('body.text')
  })
})

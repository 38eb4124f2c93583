/**
 * Parts in the workspace library: a version that uses another model as a part is checked against
 * the library at the pinned version, records the exact part versions it uses (lineage), the part's
 * page lists its users, and neither the part nor a version of it used as a part can be deleted.
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { CSRF, demo, makeTestApp, signedIn, type Agent, type TestApp } from '../helpers/app'
import { cascadeOf as cascade, partTank as tank } from './library-sheets'

let t: TestApp
let modeler: Agent
let admin: Agent
const base = `/api/workspaces/${demo.ws}/models`

beforeAll(async () => {
  t = await makeTestApp('library_parts')
  modeler = await signedIn(t.app, demo.modeler)
  admin = await signedIn(t.app, demo.admin)
})
afterAll(async () => { await t.close() })

describe('parts from the workspace library', () => {
  it('publishes a sheet with parts, records lineage, lists users and refuses to delete a used part', async () => {
    const part = await modeler.post(base).set(CSRF).send({ title: 'Part tank', text: tank })
    expect(part.status).toBe(201)
    const slug = part.body.slug as string

    // a missing version is refused with the place and the reason
    const bad = await modeler.post(base).set(CSRF).send({ title: 'Cascade (bad)', text: cascade(slug, 7) })
    expect(bad.status).toBe(400)
    expect(bad.body.error.message).toMatch(new RegExp(`part upper: no model '${slug}' version 7 in the library`))

    const host = await modeler.post(base).set(CSRF).send({ title: 'Cascade', text: cascade(slug, 1) })
    expect(host.status).toBe(201)
    const v = await modeler.get(`${base}/${host.body.id}/versions/1`)
    expect(v.body.summary.partsUsed).toEqual([{ handle: slug, version: 1 }])
    expect(v.body.summary.states.map((s: { name: string }) => s.name)).toEqual(['upper.h', 'lower.h'])

    const rows = await t.context.database.pool.query('select part_model_id, part_version from model_version_parts')
    expect(rows.rows).toEqual([{ part_model_id: part.body.id, part_version: 1 }])

    const page = await modeler.get(`${base}/${part.body.id}`)
    expect(page.body.usedIn).toEqual([{ model: { id: host.body.id, slug: host.body.slug, title: 'Cascade' }, version: 1, partVersion: 1 }])

    const del = await admin.delete(`${base}/${part.body.id}`).set(CSRF)
    expect(del.status).toBe(409)
    expect(del.body.error.message).toBe('"Part tank" cannot be deleted: it is used as a part by "Cascade" version 1 (uses version 1). Update or delete those versions first.')
    // nothing was lost
    expect((await modeler.get(`${base}/${part.body.id}`)).status).toBe(200)

    // a version used as a part is refused with its users named; an unused one goes; the last one stays
    expect((await modeler.post(`${base}/${part.body.id}/versions`).set(CSRF).send({ text: tank.replace('param  A    = 0.8', 'param  A    = 0.9'), note: 'wider', baseVersion: 1 })).status).toBe(201)
    const delV1 = await admin.delete(`${base}/${part.body.id}/versions/1`).set(CSRF)
    expect(delV1.status).toBe(409)
    expect(delV1.body.error.message).toBe('Version 1 of "Part tank" cannot be deleted: it is used as a part by "Cascade" version 1. Update or delete those versions first.')
    expect(delV1.body.error.details.usedIn).toEqual([{ model: { id: host.body.id, slug: host.body.slug, title: 'Cascade' }, version: 1, partVersion: 1 }])
    expect((await modeler.delete(`${base}/${part.body.id}/versions/2`).set(CSRF)).status).toBe(403)
    const delV2 = await admin.delete(`${base}/${part.body.id}/versions/2`).set(CSRF)
    expect(delV2.status).toBe(200)
    expect(delV2.body).toEqual({ deleted: true, id: part.body.id, version: 2 })
    expect((await modeler.get(`${base}/${part.body.id}`)).body.versions.map((v: { number: number }) => v.number)).toEqual([1])
    expect((await admin.delete(`${base}/${part.body.id}/versions/9`).set(CSRF)).status).toBe(404)

    // once the user is gone, the part may go
    expect((await admin.delete(`${base}/${host.body.id}`).set(CSRF)).status).toBe(200)
    const only = await admin.delete(`${base}/${part.body.id}/versions/1`).set(CSRF)
    expect(only.status).toBe(409)
    expect(only.body.error.message).toBe('Version 1 is the only version of "Part tank": delete the model instead.')
    expect((await admin.delete(`${base}/${part.body.id}`).set(CSRF)).status).toBe(200)
  })
})

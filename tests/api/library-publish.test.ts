/**
 * The publish race and version immutability: two publishes on the same base produce exactly one
 * new version; the loser gets 409 with the version to rebase on; nothing is lost or overwritten.
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { CSRF, demo, makeTestApp, signedIn, type Agent, type TestApp } from '../helpers/app'
import { drainSheet, drainSheetV2, lagSheet } from './library-sheets'

let t: TestApp
let modeler: Agent
let admin: Agent
const base = `/api/workspaces/${demo.ws}/models`

beforeAll(async () => {
  t = await makeTestApp('library_publish')
  modeler = await signedIn(t.app, demo.modeler)
  admin = await signedIn(t.app, demo.admin)
})
afterAll(async () => { await t.close() })

const variant = (who: string, round: number) => drainSheetV2.replace('"leak flow"', `"leak flow (${who}, round ${round})"`)

describe('two concurrent publishes on the same base', () => {
  it('creates exactly one new version each round; the other request gets 409 with the latest version', async () => {
    const created = await modeler.post(base).set(CSRF).send({ title: 'Race vessel', text: drainSheet })
    expect(created.status).toBe(201)
    const id = created.body.id
    const winners: string[] = []
    for (let round = 1; round <= 6; round++) {
      const texts = { modeler: variant('modeler', round), admin: variant('admin', round) }
      const [a, b] = await Promise.all([
        modeler.post(`${base}/${id}/versions`).set(CSRF).send({ text: texts.modeler, note: `modeler round ${round}`, baseVersion: round }),
        admin.post(`${base}/${id}/versions`).set(CSRF).send({ text: texts.admin, note: `admin round ${round}`, baseVersion: round }),
      ])
      expect([a.status, b.status].sort()).toEqual([201, 409])
      const win = a.status === 201 ? a : b
      const lose = a.status === 201 ? b : a
      const winner = a.status === 201 ? 'modeler' : 'admin'
      winners.push(winner)
      expect(win.body.number).toBe(round + 1)
      expect(lose.body.error.code).toBe('conflict')
      expect(lose.body.error.message).toMatch(new RegExp(`Rebase your changes on version ${round + 1}`))
      // the 409 carries the winner's version, text included, to rebase on
      expect(lose.body.error.details.latest.number).toBe(round + 1)
      expect(lose.body.error.details.latest.text).toBe(texts[winner])
    }
    const rows = await t.context.database.pool.query('select number, text, note from model_versions where model_id = $1 order by number', [id])
    expect(rows.rows.map((r) => r.number)).toEqual([1, 2, 3, 4, 5, 6, 7])
    expect(rows.rows[0].text).toBe(drainSheet)
    rows.rows.slice(1).forEach((r, i) => {
      expect(r.text).toBe(variant(winners[i], i + 1))
      expect(r.note).toBe(`${winners[i]} round ${i + 1}`)
    })
    const audits = await t.context.database.pool.query("select count(*)::int as n from audit_log where action = 'model.published' and target = $1", [`model:${id}`])
    expect(audits.rows[0].n).toBe(6)
  })

  it('serialises many concurrent publishes on one base: one wins, all others 409', async () => {
    const created = await modeler.post(base).set(CSRF).send({ title: 'Crowded vessel', text: lagSheet })
    const id = created.body.id
    const replies = await Promise.all(Array.from({ length: 8 }, (_, i) =>
      (i % 2 ? admin : modeler).post(`${base}/${id}/versions`).set(CSRF).send({ text: lagSheet.replace('"probe time constant"', `"try ${i}"`), note: `try ${i}`, baseVersion: 1 })))
    const statuses = replies.map((r) => r.status)
    expect(statuses.filter((s) => s === 201)).toHaveLength(1)
    expect(statuses.filter((s) => s === 409)).toHaveLength(7)
    const n = await t.context.database.pool.query('select count(*)::int as n from model_versions where model_id = $1', [id])
    expect(n.rows[0].n).toBe(2)
  })
})

describe('immutability', () => {
  it('offers no way to change a published version and the unique index refuses a duplicate number', async () => {
    const created = await modeler.post(base).set(CSRF).send({ title: 'Fixed vessel', text: drainSheet })
    const id = created.body.id
    expect((await modeler.put(`${base}/${id}/versions/1`).set(CSRF).send({ text: lagSheet })).status).toBe(404)
    expect((await modeler.patch(`${base}/${id}/versions/1`).set(CSRF).send({ text: lagSheet })).status).toBe(404)
    // deleting a version is for admins only, when nothing depends on it (library-parts.test.ts); never an edit
    expect((await modeler.delete(`${base}/${id}/versions/1`).set(CSRF)).status).toBe(403)
    // a second row with the same number is refused by the database itself (unique index)
    const dup = t.context.database.pool.query(
      "insert into model_versions (model_id, number, text, author_id, summary) select model_id, 1, 'x', author_id, '{}'::jsonb from model_versions where model_id = $1", [id])
    await expect(dup).rejects.toMatchObject({ code: '23505' })
    expect((await modeler.get(`${base}/${id}/versions/1`)).body.text).toBe(drainSheet)
  })
})

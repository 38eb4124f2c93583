/**
 * Review of model versions: a maintainer asks for a review (reviewers and admins are mailed, not
 * the asker), a reviewer requests changes with a comment (the author is mailed) or approves with a
 * comment; every step stays in the version's history; the queue lists versions awaiting review;
 * approval leaves the model's "changed" date alone and the four-eyes rule holds.
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { CSRF, demo, signedIn, type Agent } from '../helpers/app'
import { lastMailId, makeMailTestApp, waitForMail, type MailTestApp } from '../helpers/mail'
import { mailbox } from '../../server/db/schema'
import { gt } from 'drizzle-orm'

let t: MailTestApp
let modeler: Agent
let reviewer: Agent
let admin: Agent
let viewer: Agent
const ws = `/api/workspaces/${demo.ws}`
const base = `${ws}/models`
// a first-order lag (invented sheet for this test)
const sheet = `model "Review lag"
time [s]
input u = 0 [1]
param tau = 30 [s] in [1, 300]
state x = 0 [1]
dx/dt = (u - x) / tau
output y = x [1] sigma 0.01
`

beforeAll(async () => {
  t = await makeMailTestApp('library_review')
  modeler = await signedIn(t.app, demo.modeler)
  reviewer = await signedIn(t.app, demo.reviewer)
  admin = await signedIn(t.app, demo.admin)
  viewer = await signedIn(t.app, demo.viewer)
})
afterAll(async () => { await t.close() })

describe('review of versions', () => {
  it('request, changes requested, request again, approve with a comment: history, queue, mails, and the changed date', async () => {
    const m = await modeler.post(base).set(CSRF).send({ title: 'Review lag', text: sheet })
    expect(m.status).toBe(201)
    const id = m.body.id as number
    const changedAt = m.body.updatedAt as string

    expect((await viewer.post(`${base}/${id}/versions/1/review-request`).set(CSRF).send({})).status).toBe(403)
    const before = await lastMailId(t.context.db)
    const ask = await modeler.post(`${base}/${id}/versions/1/review-request`).set(CSRF).send({ comment: 'tau from the step test' })
    expect(ask.status).toBe(200)
    expect(ask.body.review).toBe('requested')
    expect(ask.body.reviews).toMatchObject([{ action: 'requested', comment: 'tau from the step test', by: { email: demo.modeler } }])
    // reviewers and admins are mailed; the asker and other modelers are not
    const mail = await waitForMail(t.context.db, demo.reviewer, { after: before, subject: /Review requested: Review lag version 1/ })
    expect(mail.text).toContain('tau from the step test')
    expect(mail.text).toContain(`http://pewter.test/w/${demo.ws}/library/${id}?tab=history`)
    await waitForMail(t.context.db, demo.admin, { after: before, subject: /Review requested/ })
    const sentTo = (await t.context.db.select().from(mailbox).where(gt(mailbox.id, before))).map((r) => r.to)
    expect(sentTo).not.toContain(demo.modeler)
    expect(sentTo).not.toContain(demo.modeler2)
    expect(sentTo).not.toContain(demo.viewer)

    const again = await modeler.post(`${base}/${id}/versions/1/review-request`).set(CSRF).send({})
    expect(again.status).toBe(409)
    expect(again.body.error.message).toBe('A review of version 1 of "Review lag" is already requested.')

    let queue = await viewer.get(`${ws}/reviews`)
    expect(queue.status).toBe(200)
    expect(queue.body.items).toMatchObject([{ model: { id, title: 'Review lag' }, version: 1, requestedBy: { email: demo.modeler }, comment: 'tau from the step test', ownWork: false }])

    // changes: a comment is required; the modeler cannot; the author is mailed
    const empty = await reviewer.post(`${base}/${id}/versions/1/request-changes`).set(CSRF).send({ comment: '  ' })
    expect(empty.status).toBe(400)
    expect(empty.body.error.message).toMatch(/say what should change before approval/)
    expect((await modeler.post(`${base}/${id}/versions/1/request-changes`).set(CSRF).send({ comment: 'x' })).status).toBe(403)
    const mid = await lastMailId(t.context.db)
    const back = await reviewer.post(`${base}/${id}/versions/1/request-changes`).set(CSRF).send({ comment: 'Bound tau below by the sensor lag (2 s).' })
    expect(back.status).toBe(200)
    expect(back.body.review).toBe('changes-requested')
    const toAuthor = await waitForMail(t.context.db, demo.modeler, { after: mid, subject: /Changes requested: Review lag version 1/ })
    expect(toAuthor.text).toContain('Bound tau below by the sensor lag (2 s).')
    expect((await viewer.get(`${ws}/reviews`)).body.items).toEqual([])

    // asked again, approved with a comment
    expect((await modeler.post(`${base}/${id}/versions/1/review-request`).set(CSRF).send({ comment: 'kept the bound: the sheet says why' })).status).toBe(200)
    queue = await viewer.get(`${ws}/reviews`)
    expect(queue.body.items.map((i: { comment: string }) => i.comment)).toEqual(['kept the bound: the sheet says why'])
    const ok = await reviewer.post(`${base}/${id}/versions/1/approve`).set(CSRF).send({ comment: 'Agreed after the second look.' })
    expect(ok.status).toBe(200)
    expect(ok.body).toMatchObject({ status: 'approved', review: null })
    expect(ok.body.reviews.map((r: { action: string; comment: string }) => [r.action, r.comment])).toEqual([
      ['requested', 'tau from the step test'],
      ['changes-requested', 'Bound tau below by the sensor lag (2 s).'],
      ['requested', 'kept the bound: the sheet says why'],
      ['approved', 'Agreed after the second look.'],
    ])
    expect((await viewer.get(`${ws}/reviews`)).body.items).toEqual([])
    const page = await viewer.get(`${base}/${id}`)
    // approval records a review: the model's "changed" date stays
    expect(page.body.updatedAt).toBe(changedAt)
    expect(page.body.versions[0].reviews).toHaveLength(4)
    // an approved version is not sent back nor asked for again
    expect((await reviewer.post(`${base}/${id}/versions/1/request-changes`).set(CSRF).send({ comment: 'late' })).status).toBe(409)
    expect((await modeler.post(`${base}/${id}/versions/1/review-request`).set(CSRF).send({})).status).toBe(409)
    // approving without a body still works (older clients)
    expect((await modeler.post(`${base}/${id}/versions`).set(CSRF).send({ text: sheet.replace('tau = 30', 'tau = 35'), note: 'new start', baseVersion: 1 })).status).toBe(201)
    expect((await reviewer.post(`${base}/${id}/versions/2/approve`).set(CSRF)).status).toBe(200)
  })

  it('the four-eyes rule holds for a version in the queue: its author sees it as their own work and cannot approve it', async () => {
    expect((await admin.put(`${ws}/settings`).set(CSRF).send({ fourEyes: true })).status).toBe(200)
    const m = await admin.post(base).set(CSRF).send({ title: 'Review lag (admin)', text: sheet })
    expect(m.status).toBe(201)
    expect((await admin.post(`${base}/${m.body.id}/versions/1/review-request`).set(CSRF).send({})).status).toBe(200)
    const mine = (await admin.get(`${ws}/reviews`)).body.items.find((i: { model: { id: number } }) => i.model.id === m.body.id)
    expect(mine.ownWork).toBe(true)
    expect((await reviewer.get(`${ws}/reviews`)).body.items.find((i: { model: { id: number } }) => i.model.id === m.body.id).ownWork).toBe(false)
    const self = await admin.post(`${base}/${m.body.id}/versions/1/approve`).set(CSRF).send({ comment: 'mine' })
    expect(self.status).toBe(403)
    expect(self.body.error.message).toMatch(/four-eyes rule/)
    expect((await reviewer.post(`${base}/${m.body.id}/versions/1/approve`).set(CSRF).send({})).status).toBe(200)
    await admin.put(`${ws}/settings`).set(CSRF).send({ fourEyes: false })
  })
})

/**
 * Parts seen from the library: the editor's part texts and handles, and the offer to move a
 * model's pinned parts to newer approved versions (flattened diff, texts for a quick simulation),
 * accepted into the caller's draft. The sheets are the Tinmoor Works templates in models/parts
 * (invented demo plant).
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { CSRF, demo, makeTestApp, signedIn, type Agent, type TestApp } from '../helpers/app'
import { cascadeOf as cascade, partTank as tank } from './library-sheets'

let t: TestApp
let modeler: Agent
let reviewer: Agent
let viewer: Agent
const ws = `/api/workspaces/${demo.ws}`
const base = `${ws}/models`
/** the cascade at version 1 with its part lines (only) moved to version 2: comments keep their text */
const repinned = (slug: string) => cascade(slug, 1).replace(/^(part\s+\w+\s*=\s*[\w-]+)@1/gm, '$1@2')

beforeAll(async () => {
  t = await makeTestApp('library_part_updates')
  modeler = await signedIn(t.app, demo.modeler)
  reviewer = await signedIn(t.app, demo.reviewer)
  viewer = await signedIn(t.app, demo.viewer)
})
afterAll(async () => { await t.close() })

describe('part updates', () => {
  it('offers newer approved part versions with the flattened diff, and accepting writes a draft with the new pins', async () => {
    const part = await modeler.post(base).set(CSRF).send({ title: 'Update tank', text: tank })
    expect(part.status).toBe(201)
    const slug = part.body.slug as string
    const host = await modeler.post(base).set(CSRF).send({ title: 'Update cascade', text: cascade(slug, 1) })
    expect(host.status).toBe(201)

    // the editor's texts: every part the sheet needs, keyed handle@version; a missing one is left out
    const texts = await viewer.post(`${ws}/parts/texts`).set(CSRF).send({ text: cascade(slug, 1) })
    expect(texts.status).toBe(200)
    expect(texts.body.texts).toEqual({ [`${slug}@1`]: tank })
    expect((await viewer.post(`${ws}/parts/texts`).set(CSRF).send({ text: cascade(slug, 9) })).body.texts).toEqual({})
    const noText = await viewer.post(`${ws}/parts/texts`).set(CSRF).send({})
    expect(noText.status).toBe(400)
    expect(noText.body.error.message).toMatch(/text/)

    // version 2 of the part: a different outlet coefficient, not yet approved → no offer
    const tank2 = tank.replace('param  Cd   = 2e-3', 'param  Cd   = 3e-3')
    expect(tank2).not.toBe(tank)
    expect((await modeler.post(`${base}/${part.body.id}/versions`).set(CSRF).send({ text: tank2, note: 'Cd from the drain test', baseVersion: 1 })).status).toBe(201)
    let offer = await viewer.get(`${base}/${host.body.id}/part-updates`)
    expect(offer.status).toBe(200)
    expect(offer.body.updates).toEqual([])
    expect(offer.body.added + offer.body.removed).toBe(0)

    const cat = await viewer.get(`${ws}/parts`)
    expect(cat.body.models.find((x: { handle: string }) => x.handle === slug)).toEqual({ handle: slug, title: 'Update tank', latest: 2, latestApproved: null })

    expect((await reviewer.post(`${base}/${part.body.id}/versions/2/approve`).set(CSRF).send({})).status).toBe(200)
    offer = await viewer.get(`${base}/${host.body.id}/part-updates`)
    expect(offer.body.version).toBe(1)
    expect(offer.body.updates).toEqual([
      { name: 'upper', handle: slug, modelId: part.body.id, title: 'Update tank', pinned: 1, newest: 2 },
      { name: 'lower', handle: slug, modelId: part.body.id, title: 'Update tank', pinned: 1, newest: 2 },
    ])
    expect(offer.body.after.text).toBe(repinned(slug))
    expect(offer.body.after.text).not.toBe(cascade(slug, 1))
    expect(Object.keys(offer.body.texts).sort()).toEqual([`${slug}@1`, `${slug}@2`])
    // the flattened sheets differ in both parts' Cd lines and the parts' header comments
    const removed = offer.body.lines.filter((l: { kind: string }) => l.kind === 'removed').map((l: { text: string }) => l.text)
    const added = offer.body.lines.filter((l: { kind: string }) => l.kind === 'added').map((l: { text: string }) => l.text)
    expect(removed.filter((l: string) => /^param\s+(upper|lower)\.Cd\s*=\s*2e-3/.test(l))).toHaveLength(2)
    expect(added.filter((l: string) => /^param\s+(upper|lower)\.Cd\s*=\s*3e-3/.test(l))).toHaveLength(2)
    expect(offer.body.before.flat).toContain('upper.Cd')

    // accepting: stale base, unknown part, a viewer
    expect((await modeler.post(`${base}/${host.body.id}/part-updates`).set(CSRF).send({ baseVersion: 2 })).status).toBe(409)
    const unknown = await modeler.post(`${base}/${host.body.id}/part-updates`).set(CSRF).send({ baseVersion: 1, parts: ['middle'] })
    expect(unknown.status).toBe(400)
    expect(unknown.body.error.message).toBe("No newer approved version for part 'middle' of version 1")
    expect((await viewer.post(`${base}/${host.body.id}/part-updates`).set(CSRF).send({ baseVersion: 1 })).status).toBe(403)

    const only = await modeler.post(`${base}/${host.body.id}/part-updates`).set(CSRF).send({ baseVersion: 1, parts: ['upper'] })
    expect(only.status).toBe(200)
    expect(only.body.draft.text).toContain(`part   upper = ${slug}@2`)
    expect(only.body.draft.text).toContain(`part   lower = ${slug}@1`)

    const acc = await modeler.post(`${base}/${host.body.id}/part-updates`).set(CSRF).send({ baseVersion: 1 })
    expect(acc.status).toBe(200)
    expect(acc.body.draft).toMatchObject({ text: repinned(slug), baseVersion: 1 })
    const page = await modeler.get(`${base}/${host.body.id}`)
    expect(page.body.draft.text).toBe(repinned(slug))
    // nothing was published
    expect(page.body.latestVersion).toBe(1)
  })
})

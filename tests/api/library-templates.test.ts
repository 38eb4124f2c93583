/** The shipped templates: loaded into the demo workspace as version 1, never duplicated by later starts. */
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { mkdtempSync, writeFileSync, copyFileSync } from 'node:fs'
import os from 'node:os'
import path from 'node:path'
import { createContext } from '../../server/bootstrap'
import { loadTemplates, readTemplates, templatesFolder } from '../../server/services/templates'
import { checkSheet } from '../../server/services/sheet-check'
import { blankSheet } from '../../src/composables/blankSheet'
import { CSRF, demo, makeTestApp, signedIn, type TestApp } from '../helpers/app'
import { signUpVerified } from '../helpers/signup'
import { drainSheet, drainSheetWithError, lagSheet } from './library-sheets'

let t: TestApp
beforeAll(async () => { t = await makeTestApp('library_templates') })
afterAll(async () => { await t.close() })

const templateRows = async () => (await t.context.database.pool.query(
  "select m.template, m.title, (select count(*)::int from model_versions v where v.model_id = m.id) as versions from models m join workspaces w on w.id = m.workspace_id where w.slug = $1 and m.template is not null order by m.template", [demo.ws])).rows

describe('templates from models/', () => {
  it('loads every clean sheet of models/ into the demo workspace as version 1, once', async () => {
    const shipped = readTemplates().filter((x) => checkSheet(x.text).ok).map((x) => x.file).sort()
    // every shipped template checks clean, so every one of them is in the library
    expect(shipped.length).toBeGreaterThanOrEqual(9)
    expect(shipped).toHaveLength(readTemplates().length)
    const rows = await templateRows()
    expect(rows.map((r) => r.template)).toEqual(shipped)
    expect(rows.every((r) => r.versions === 1)).toBe(true)
    // a second start of the server on the same database adds nothing
    const again = await createContext({ databaseUrl: t.context.config.databaseUrl, rateLimitAuth: 10_000 })
    await again.database.close()
    expect(await templateRows()).toEqual(rows)
  })

  it('loads a folder of templates with title, header description and tags, skips a broken one, and is idempotent', async () => {
    const folder = mkdtempSync(path.join(os.tmpdir(), 'pewter-templates-'))
    writeFileSync(path.join(folder, 'drain.sheet'), drainSheet)
    writeFileSync(path.join(folder, 'probe.sheet'), `# A temperature probe's first-order lag.\n# tags: probe, Sensors\n\n${lagSheet}`)
    writeFileSync(path.join(folder, 'broken.sheet'), drainSheetWithError)
    const logs: string[] = []
    const first = await loadTemplates(t.context.db, t.context.database.pool, { folder, log: (m) => logs.push(m) })
    expect(first).toEqual(['drain.sheet', 'probe.sheet'])
    expect(logs.join('\n')).toMatch(/broken\.sheet not loaded: line 8, column 10: unknown name 'q_inn'/)
    // concurrent later starts never duplicate
    const again = await Promise.all([1, 2, 3].map(() => loadTemplates(t.context.db, t.context.database.pool, { folder, log: () => undefined })))
    expect(again).toEqual([[], [], []])
    const names = (await templateRows()).map((r) => r.template)
    expect(names.filter((n) => n === 'drain.sheet')).toHaveLength(1)
    expect(names.filter((n) => n === 'probe.sheet')).toHaveLength(1)
    expect(names).not.toContain('broken.sheet')

    const viewer = await signedIn(t.app, demo.viewer)
    const list = (await viewer.get(`/api/workspaces/${demo.ws}/models`).query({ tag: 'template', q: 'probe', pageSize: 100 })).body.items
    const probe = list.find((m: { template: string }) => m.template === 'probe.sheet')
    expect(probe.title).toBe('Probe lag')
    expect(probe.tags).toEqual(['template', 'probe', 'sensors'])
    expect(probe.description).toMatch(/^A temperature probe's first-order lag\./)
    expect(probe.owner.email).toBe(demo.admin)
    expect(probe.latestVersion).toBe(1)
    const detail = (await viewer.get(`/api/workspaces/${demo.ws}/models/${probe.id}/versions/1`)).body
    expect(detail.text).toContain('model "Probe lag"')
    expect(detail.note).toBe('Template shipped with Pewter (models/probe.sheet)')

    // a model made from a template is a fork of it: lineage kept, but it is no template itself
    const modeler = await signedIn(t.app, demo.modeler)
    const mine = await modeler.post(`/api/workspaces/${demo.ws}/models/${probe.id}/fork`).set(CSRF).send({ title: 'My probe' })
    expect(mine.status).toBe(201)
    expect(mine.body.tags).toEqual(['probe', 'sensors'])
    expect(mine.body.template).toBeNull()
    expect(mine.body.forkOf.id).toBe(probe.id)

    // a template added to the folder later appears at the next start
    copyFileSync(path.join(folder, 'drain.sheet'), path.join(folder, 'drain-copy.sheet'))
    expect(await loadTemplates(t.context.db, t.context.database.pool, { folder, log: () => undefined })).toEqual(['drain-copy.sheet'])

    // a template model an admin deleted is not brought back by later starts
    const admin = await signedIn(t.app, demo.admin)
    const copy = (await t.context.database.pool.query("select id from models where template = 'drain-copy.sheet'")).rows[0].id
    expect((await admin.delete(`/api/workspaces/${demo.ws}/models/${copy}`).set(CSRF)).status).toBe(200)
    expect(await loadTemplates(t.context.db, t.context.database.pool, { folder, log: () => undefined })).toEqual([])
    expect((await templateRows()).map((r) => r.template)).not.toContain('drain-copy.sheet')
  })

  it('loads nothing into a database without the demo workspace', async () => {
    const bare = await makeTestApp('library_templates_bare', {}, { seed: false })
    try {
      expect(await loadTemplates(bare.context.db, bare.context.database.pool)).toEqual([])
    } finally { await bare.close() }
  })

  it('ships its templates in models/', () => {
    expect(templatesFolder.endsWith(`${path.sep}models`)).toBe(true)
  })

  it('starts a model "from a blank sheet" with a sheet that checks clean', () => {
    const r = checkSheet(blankSheet('Tank "T-1" (invented)'))
    expect(r.diagnostics).toEqual([])
    expect(r.summary?.title).toBe("Tank 'T-1' (invented)")
  })
})

describe('templates in every workspace, and the example project', () => {
  it('gives a new workspace the shipped templates, read-only and forkable', async () => {
    // sign-up by the mailed confirmation link; the account and its workspace are made when it is followed
    const { agent, me } = await signUpVerified(t, { email: 'first.steps@example.org', password: 'long-enough-tinmoor-1', name: 'First Steps' })
    const ws = me.workspaces[0].slug
    const list = (await agent.get(`/api/workspaces/${ws}/models`).query({ tag: 'template', pageSize: 100 })).body.items
    expect(list.map((m: { template: string }) => m.template).sort()).toEqual(readTemplates().map((x) => x.file).sort())
    const buffer = list.find((m: { template: string }) => m.template === 'heated-buffer-vessel.sheet')
    const detail = (await agent.get(`/api/workspaces/${ws}/models/${buffer.id}`)).body
    // the workspace's own admin may fork the template but not change it
    expect(detail.can).toMatchObject({ publish: false, edit: false, fork: true })
    const v1 = (await agent.get(`/api/workspaces/${ws}/models/${buffer.id}/versions/1`)).body
    const pub = await agent.post(`/api/workspaces/${ws}/models/${buffer.id}/versions`).set(CSRF).send({ text: v1.text, note: 'try', baseVersion: 1 })
    expect(pub.status).toBe(409)
    expect(pub.body.error.message).toMatch(/read-only: fork it/)
    const fork = await agent.post(`/api/workspaces/${ws}/models/${buffer.id}/fork`).set(CSRF).send({ title: 'My buffer vessel' })
    expect(fork.status).toBe(201)
  })

  it('"try it on example data" makes a project with invented traces, a binding and a queued first fit', async () => {
    const agent = await signedIn(t.app, demo.modeler)
    const r = await agent.post(`/api/workspaces/${demo.ws}/projects/example`).set(CSRF).send({})
    expect(r.status).toBe(201)
    const project = (await agent.get(`/api/workspaces/${demo.ws}/projects/${r.body.projectId}`)).body
    expect(project.description).toMatch(/invented/i)
    const run = (await agent.get(`/api/workspaces/${demo.ws}/runs/${r.body.runId}`)).body
    expect(run.projectId ?? run.project?.id).toBe(r.body.projectId)
    expect(['queued', 'running', 'succeeded', 'failed']).toContain(run.status)
    const viewer = await signedIn(t.app, demo.viewer)
    expect((await viewer.post(`/api/workspaces/${demo.ws}/projects/example`).set(CSRF).send({})).status).toBe(403)
  })
})

/** Shared steps of the dataset and run API tests: the demo project's template, uploads, waiting for a run. */
import { expect } from 'vitest'
import { CSRF, type Agent, type TestApp } from '../helpers/app'
import { BUFFER_TEMPLATE, bufferVesselCsv, templateVersion } from '../../server/services/demo-project'
import { DEMO_WORKSPACE } from '../../server/db/seed'
import { workspaces } from '../../server/db/schema'
import { eq } from 'drizzle-orm'

export const WS = '/api/workspaces/tinmoor'

export async function bufferTemplate(t: TestApp) {
  const [ws] = await t.context.db.select().from(workspaces).where(eq(workspaces.slug, DEMO_WORKSPACE.slug))
  const tv = await templateVersion(t.context.db, ws.id, BUFFER_TEMPLATE)
  if (!tv) throw new Error('the heated buffer vessel template is not loaded')
  return tv
}

export async function newProject(agent: Agent, name = 'Test project') {
  const r = await agent.post(`${WS}/projects`).set(CSRF).send({ name, description: 'made by a test' })
  expect(r.status).toBe(201)
  return r.body.id as number
}

export function upload(agent: Agent, pid: number, body: string | Buffer, filename = 'trace.csv', fields: Record<string, string> = {}) {
  const req = agent.post(`${WS}/projects/${pid}/datasets`).set(CSRF)
  for (const [k, v] of Object.entries(fields)) req.field(k, v)
  return req.attach('file', typeof body === 'string' ? Buffer.from(body, 'utf8') : body, filename)
}

const TERMINAL = ['succeeded', 'failed', 'cancelled']

export async function waitForRun(agent: Agent, rid: number, timeoutMs = 120_000) {
  const until = Date.now() + timeoutMs
  for (;;) {
    const r = await agent.get(`${WS}/runs/${rid}`)
    expect(r.status).toBe(200)
    if (TERMINAL.includes(r.body.status)) return r.body
    if (Date.now() > until) throw new Error(`run ${rid} still ${r.body.status} after ${timeoutMs} ms`)
    await new Promise((res) => setTimeout(res, 100))
  }
}

/** One uploaded record of the buffer vessel: the demo generator's seeded synthetic trace (invented data). */
export interface BufferRecord {
  file: string
  purpose: 'estimation' | 'validation'
  csv: Parameters<typeof bufferVesselCsv>[1]
}

/**
 * A project on the heated buffer vessel template with the given records uploaded and the template
 * bound to the first one; the record ids in the order given.
 */
export async function bufferProject(t: TestApp, agent: Agent, name: string, records: BufferRecord[]) {
  const tv = await bufferTemplate(t)
  const pid = await newProject(agent, name)
  const ids: number[] = []
  for (const r of records) {
    const res = await upload(agent, pid, bufferVesselCsv(tv.text, r.csv), r.file, { purpose: r.purpose })
    expect(res.status).toBe(201)
    ids.push(res.body.id as number)
  }
  const b = await agent.post(`${WS}/projects/${pid}/bindings`).set(CSRF).send({ modelId: tv.modelId, version: tv.number, datasetId: ids[0] })
  expect(b.status).toBe(201)
  return { tv, pid, ids, bindingId: b.body.id as number }
}

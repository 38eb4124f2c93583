import { afterAll, beforeAll, it } from 'vitest'
import { CSRF, demo, makeTestApp, signedIn, type TestApp } from '../helpers/app'
import { bufferVesselCsv } from '../../server/services/demo-project'
import { bufferTemplate, newProject, upload, WS } from './runs-helpers'
let t: TestApp
beforeAll(async () => { t = await makeTestApp('runsdbg') })
afterAll(async () => { await t.close() })
it('debug', async () => {
  const m = await signedIn(t.app, demo.modeler)
  const tv = await bufferTemplate(t)
  const pid = await newProject(m)
  const est = (await upload(m, pid, bufferVesselCsv(tv.text, { seed: 11, label: 'x' }), 'est.csv')).body
  const r = await m.post(`${WS}/projects/${pid}/runs`).set(CSRF).send({ modelId: tv.modelId, version: tv.number, estimation: [est.id], starts: 40, seed: 5 })
  const t0 = Date.now()
  for (let i = 0; i < 400; i++) {
    const s = (await m.get(`${WS}/runs/${r.body.id}`)).body
    console.log(Date.now() - t0, s.status, JSON.stringify(s.progress)?.slice(0, 200), s.error)
    if (['succeeded', 'failed', 'cancelled'].includes(s.status)) { console.log(JSON.stringify(s.result?.starts?.slice(0, 3)), s.result?.reason); break }
    await new Promise((res) => setTimeout(res, 300))
  }
}, 200_000)

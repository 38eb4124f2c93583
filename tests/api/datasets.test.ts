/**
 * Datasets through the API: upload (units, delimiters, decimal comma, time units, ISO-8601), the
 * original kept byte for byte, every bad-upload case refused with row and column, warnings for gaps,
 * conditioning into child datasets, marks, bindings with unit conversion, roles and workspaces.
 * All traces here are small invented examples.
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { createHash } from 'node:crypto'
import { CSRF, demo, makeTestApp, signedIn, type Agent, type TestApp } from '../helpers/app'
import { signUpVerified } from '../helpers/signup'
import { bufferTemplate, newProject, upload, WS } from './runs-helpers'

let t: TestApp
let modeler: Agent
let viewer: Agent
let pid: number

beforeAll(async () => {
  t = await makeTestApp('datasets', { uploadLimitBytes: 64 * 1024 })
  t.context.services.datasetMaxRows = 1000
  modeler = await signedIn(t.app, demo.modeler)
  viewer = await signedIn(t.app, demo.viewer)
  pid = await newProject(modeler, 'Dataset tests')
})
afterAll(async () => { await t.close() })

const GOOD = [
  '# Invented example trace (not a measurement)',
  'time [min],q_in [L/min],temp [degC],level [cm]',
  '0,120,20.0,50',
  '0.5,120,20.5,51',
  '1,150,21.0,',
  '1.5,150,21.5,53',
  '2,150,22.0,54',
].join('\n')

describe('upload', () => {
  it('stores columns with units, statistics, time in seconds, notes, and the original file byte for byte', async () => {
    const r = await upload(modeler, pid, GOOD, 'good.csv', { purpose: 'estimation' })
    expect(r.status).toBe(201)
    const d = r.body
    expect(d.rowCount).toBe(5)
    expect(d.purpose).toBe('estimation')
    expect(d.time).toEqual({ header: 'time [min]', unit: 'min', format: 'numeric' })
    expect(d.columns.map((c: { name: string; unit: string }) => [c.name, c.unit])).toEqual([['q_in', 'L/min'], ['temp', 'degC'], ['level', 'cm']])
    // minutes → seconds
    expect(d.preview.map((row: number[]) => row[0])).toEqual([0, 30, 60, 90, 120])
    const temp = d.columns.find((c: { name: string }) => c.name === 'temp')
    expect(temp.stats.mean).toBeCloseTo(21, 12)
    expect(temp.stats.min).toBe(20)
    expect(temp.stats.max).toBe(22)
    // sample standard deviation of 20, 20.5, 21, 21.5, 22 = sqrt(0.625)
    expect(temp.stats.std).toBeCloseTo(Math.sqrt(0.625), 12)
    const level = d.columns.find((c: { name: string }) => c.name === 'level')
    expect(level.stats.missing).toBe(1)
    expect(d.warnings.some((w: { message: string }) => /empty cell/.test(w.message))).toBe(true)
    expect(d.notes).toEqual(['Invented example trace (not a measurement)'])
    expect(d.contentHash).toBe(createHash('sha256').update(GOOD).digest('hex'))
    const orig = await modeler.get(`${WS}/datasets/${d.id}/original`).buffer(true).parse((res, cb) => {
      const chunks: Buffer[] = []
      res.on('data', (c: Buffer) => chunks.push(c))
      res.on('end', () => cb(null, Buffer.concat(chunks)))
    })
    expect(orig.status).toBe(200)
    expect((orig.body as Buffer).toString('utf8')).toBe(GOOD)
    const got = await viewer.get(`${WS}/datasets/${d.id}`)
    expect(got.status).toBe(200)
    expect(got.body.columns).toHaveLength(3)
    const data = await viewer.get(`${WS}/datasets/${d.id}/data`)
    expect(data.body.t).toEqual([0, 30, 60, 90, 120])
    expect(data.body.columns.level).toEqual([50, 51, null, 53, 54])
  })

  it('detects a semicolon delimiter with decimal commas', async () => {
    const csv = 't;level [m];flow\n0;0,50;1,5\n1;0,52;1,5\n2;0,55;2,25\n'
    const r = await upload(modeler, pid, csv, 'comma.csv')
    expect(r.status).toBe(201)
    expect(r.body.preview).toEqual([[0, 0.5, 1.5], [1, 0.52, 1.5], [2, 0.55, 2.25]])
    expect(r.body.warnings.some((w: { message: string }) => /decimal separator/.test(w.message))).toBe(true)
  })

  it('reads tab-separated files and ISO-8601 timestamps as seconds from the first sample', async () => {
    const csv = 'timestamp\tvalue\n2026-03-01T08:00:00Z\t1\n2026-03-01T08:00:10Z\t2\n2026-03-01T08:01:00Z\t3\n'
    const r = await upload(modeler, pid, csv, 'iso.tsv')
    expect(r.status).toBe(201)
    expect(r.body.time.format).toBe('iso8601')
    expect(r.body.preview.map((row: number[]) => row[0])).toEqual([0, 10, 60])
  })

  it('accepts a file with gaps and lists them as warnings', async () => {
    const rows = ['t,y']
    for (let k = 0; k < 20; k++) rows.push(`${k < 10 ? k : k + 40},${k}`)
    const r = await upload(modeler, pid, rows.join('\n'), 'gap.csv')
    expect(r.status).toBe(201)
    const gap = r.body.warnings.find((w: { message: string }) => /gap/.test(w.message))
    expect(gap).toBeTruthy()
    // the file row of the first sample after the gap (header = row 1)
    expect(gap.row).toBe(12)
    expect(gap.message).toContain('between 9 s and 50 s')
  })
})

describe('bad uploads are refused with what and where', () => {
  const bad: [string, string | Buffer, RegExp, { row?: number; column?: string }?][] = [
    ['an empty file', '', /empty/],
    ['a header without data', 't,y\n', /no data rows/],
    ['a single column (no signal besides time)', 't\n0\n1\n', /no data columns/],
    ['no time column (the first column is text)', 'name,y\nabc,1\ndef,2\n', /no time column/, { row: 2, column: 'name' }],
    ['non-increasing time', 't,y\n0,1\n2,2\n1,3\n', /time is not increasing/, { row: 4, column: 't' }],
    ['duplicate time', 't,y\n0,1\n1,2\n1,3\n', /duplicate time/, { row: 4, column: 't' }],
    ['an empty time cell', 't,y\n0,1\n,2\n', /time cell is empty/, { row: 3, column: 't' }],
    ['text in a numeric column', 't,y,z\n0,1,2\n1,2,oops\n', /'oops' is not a number/, { row: 3, column: 'z' }],
    ['a ragged row', 't,y,z\n0,1,2\n1,2\n', /the row has 2 field\(s\), the header has 3/, { row: 3 }],
    ['duplicate headers', 't,level,Level\n0,1,2\n1,2,3\n', /column 'Level': duplicate column name \(columns 2 and 3\)/, { row: 1, column: 'Level' }],
    ['an empty header', 't,,z\n0,1,2\n', /no name/, { row: 1 }],
    ['an all-NaN column', 't,y,z\n0,1,NaN\n1,2,\n', /column 'z': the column has no numeric value/, { column: 'z' }],
    ['an unknown unit', 't,level [furlongs]\n0,1\n', /unit 'furlongs'/, { row: 1, column: 'level' }],
    ['a time unit that is not time', 't [m],y\n0,1\n', /'m' is not a unit of time/, { row: 1 }],
    ['UTF-16', Buffer.concat([Buffer.from([0xff, 0xfe]), Buffer.from('t,y\n0,1\n', 'utf16le')]), /UTF-16/],
    ['Latin-1 bytes', Buffer.concat([Buffer.from('t,temp\n0,1\n1,2 '), Buffer.from([0xb0]), Buffer.from('C\n')]), /line 3, column 5: byte 0xB0 is not valid UTF-8/],
    ['a binary file', Buffer.from([0x50, 0x4b, 0x03, 0x04, 0x00, 0x00, 0x08]), /NUL byte/],
  ]
  for (const [what, body, message, where] of bad) {
    it(`refuses ${what}`, async () => {
      const before = (await modeler.get(`${WS}/projects/${pid}/datasets`)).body.datasets.length
      const r = await upload(modeler, pid, body, 'bad.csv')
      expect(r.status).toBe(400)
      expect(r.body.error.message).toMatch(message)
      expect(r.body.error.message).toMatch(/^bad\.csv/)
      if (where) expect(r.body.error.details[0]).toMatchObject(where)
      // nothing stored
      expect((await modeler.get(`${WS}/projects/${pid}/datasets`)).body.datasets.length).toBe(before)
    })
  }

  it('counts rows in the uploaded file, comment lines included', async () => {
    const r = await upload(modeler, pid, '# invented example\n# second note\nt,y\n0,1\n1,x\n', 'bad.csv')
    expect(r.status).toBe(400)
    expect(r.body.error.message).toBe("bad.csv, row 5, column 'y': 'x' is not a number")
  })

  it('reports every problem of a file at once (first 50), each with row and column, counting the comment lines', async () => {
    const rows = ['# invented example with many faults', 't,level [m],temp [degC]', '0,1,20', '1,x,21', '1,2,22', '3,4', '4,5,warm']
    for (let k = 5; k < 80; k++) rows.push(`${k},bad,${k}`)
    const before = (await modeler.get(`${WS}/projects/${pid}/datasets`)).body.datasets.length
    const r = await upload(modeler, pid, rows.join('\n'), 'faults.csv')
    expect(r.status).toBe(400)
    expect(r.body.error.code).toBe('validation_failed')
    const details = r.body.error.details as { row?: number; column?: string; message: string }[]
    expect(details).toHaveLength(50)
    expect(details.slice(0, 4)).toEqual([
      { row: 6, message: 'the row has 2 field(s), the header has 3' },
      { row: 5, column: 't', message: 'duplicate time 1 (same as row 4)' },
      { row: 4, column: 'level', message: "'x' is not a number" },
      { row: 8, column: 'level', message: "'bad' is not a number" },
    ])
    // 1 ragged row, 1 duplicate time, 1 + 75 bad levels, 1 bad temperature: 79 in all
    expect(r.body.error.message).toBe('faults.csv, row 6: the row has 2 field(s), the header has 3 (and 78 more problems; the first 50 are listed)')
    expect((await modeler.get(`${WS}/projects/${pid}/datasets`)).body.datasets.length).toBe(before)
  })

  it('reads trailing delimiters, quoted decimal commas, and n/a or - as missing values', async () => {
    const r = await upload(modeler, pid, 't [s],level [m],flow [m3/h],\n0,"1,25",n/a,\n1,"1,5",-,\n2,"1,75","0,5",\n', 'export.csv')
    expect(r.status).toBe(201)
    expect(r.body.columns.map((c: { name: string }) => c.name)).toEqual(['level', 'flow'])
    expect(r.body.preview).toEqual([[0, 1.25, null], [1, 1.5, null], [2, 1.75, 0.5]])
    expect(r.body.warnings.some((w: { message: string }) => /',' as the decimal separator \(in quoted cells\)/.test(w.message))).toBe(true)
  })

  it('states the upload limits for the form', async () => {
    const r = await viewer.get(`${WS}/datasets/limits`)
    expect(r.status).toBe(200)
    expect(r.body).toEqual({ uploadBytes: 64 * 1024, rows: 1000, columns: 1000 })
  })

  it('refuses too many rows, naming the limit and the row', async () => {
    const rows = ['t,y']
    for (let k = 0; k < 1005; k++) rows.push(`${k},${k % 7}`)
    const r = await upload(modeler, pid, rows.join('\n'), 'long.csv')
    expect(r.status).toBe(400)
    expect(r.body.error.message).toMatch(/too many rows: the limit is 1000 data rows/)
    expect(r.body.error.details[0].row).toBe(1002)
  })

  it('answers 413 for a file over the size limit', async () => {
    const r = await upload(modeler, pid, Buffer.alloc(70 * 1024, 0x31), 'huge.csv')
    expect(r.status).toBe(413)
    expect(r.body.error.code).toBe('payload_too_large')
  })

  it('answers 400 when the multipart field file is missing', async () => {
    const r = await modeler.post(`${WS}/projects/${pid}/datasets`).set(CSRF).field('name', 'x')
    expect(r.status).toBe(400)
    expect(r.body.error.message).toMatch(/field 'file'/)
  })
})

describe('roles and workspaces', () => {
  it('renames a project (modeler) but not as a viewer', async () => {
    const r = await modeler.patch(`${WS}/projects/${pid}`).set(CSRF).send({ description: 'traces for the dataset tests' })
    expect(r.status).toBe(200)
    expect(r.body.description).toBe('traces for the dataset tests')
    expect(r.body.name).toBe('Dataset tests')
    expect((await viewer.patch(`${WS}/projects/${pid}`).set(CSRF).send({ name: 'x' })).status).toBe(403)
  })

  it('a viewer may read but not upload (403)', async () => {
    const r = await upload(viewer, pid, GOOD)
    expect(r.status).toBe(403)
    expect((await viewer.get(`${WS}/projects/${pid}/datasets`)).status).toBe(200)
  })

  it('another workspace cannot see the project or its datasets (404)', async () => {
    const { agent: outsider, me } = await signUpVerified(t, { email: 'outsider@example.org', password: 'long-enough-1', name: 'Outsider' })
    const own = me.workspaces[0].slug
    const mine = await upload(modeler, pid, GOOD, 'private.csv')
    expect(mine.status).toBe(201)
    expect((await outsider.get(`${WS}/projects/${pid}/datasets`)).status).toBe(404)
    expect((await outsider.get(`/api/workspaces/${own}/datasets/${mine.body.id}`)).status).toBe(404)
    expect((await outsider.get(`/api/workspaces/${own}/projects/${pid}/datasets`)).status).toBe(404)
  })
})

describe('conditioning makes a new dataset and leaves the parent as it was', () => {
  let parentId: number
  beforeAll(async () => {
    const rows = ['time [s],u,y [degC]']
    for (let k = 0; k <= 40; k++) rows.push(`${k * 0.5},${k < 20 ? 0 : 1},${(10 + k * 0.1 + (k === 25 ? 30 : 0)).toFixed(2)}`)
    const r = await upload(modeler, pid, rows.join('\n'), 'cond.csv')
    expect(r.status).toBe(201)
    parentId = r.body.id
  })

  it('trims, resamples, subtracts the initial value and marks an outlier, recording each step', async () => {
    const r = await modeler.post(`${WS}/datasets/${parentId}/condition`).set(CSRF).send({
      name: 'conditioned',
      steps: [
        { op: 'outliers', halfWindow: 3, threshold: 3.5, columns: ['y'] },
        { op: 'trim', from: 2, to: 18 },
        { op: 'resample', step: 1 },
        { op: 'offset', mode: 'initial', columns: ['y'] },
      ],
    })
    expect(r.status).toBe(201)
    const d = r.body
    expect(d.parentId).toBe(parentId)
    expect(d.steps.map((s: { step: { op: string } }) => s.step.op)).toEqual(['outliers', 'trim', 'resample', 'offset'])
    // the spike at row 27 (k = 25, t = 12.5 s) is the only outlier
    expect(d.steps[0].details.rows).toEqual({ y: [26] })
    expect(d.rowCount).toBe(17)
    expect(d.preview[0][0]).toBe(2)
    expect(d.preview[1][0]).toBe(3)
    // y(t) = 10 + 0.2 t, minus y(2) = 10.4
    expect(d.preview[3][2]).toBeCloseTo(0.2 * 5 - 0.4, 9)
    expect(d.steps[3].details.offsets.y).toBeCloseTo(10.4, 9)
    const parent = (await modeler.get(`${WS}/datasets/${parentId}`)).body
    expect(parent.rowCount).toBe(41)
    expect(parent.steps).toEqual([])
    expect(d.contentHash).not.toBe(parent.contentHash)
  })

  it('excludes a window by blanking its cells', async () => {
    const r = await modeler.post(`${WS}/datasets/${parentId}/condition`).set(CSRF).send({ steps: [{ op: 'exclude', windows: [[5, 6]], columns: ['y'] }] })
    expect(r.status).toBe(201)
    const data = (await modeler.get(`${WS}/datasets/${r.body.id}/data`)).body
    expect(data.columns.y.slice(9, 14)).toEqual([10.9, null, null, null, 11.3])
    expect(data.columns.u.every((v: number | null) => v !== null)).toBe(true)
  })

  it('refuses a step that names a missing column or leaves too few samples', async () => {
    const a = await modeler.post(`${WS}/datasets/${parentId}/condition`).set(CSRF).send({ steps: [{ op: 'offset', mode: 'mean', columns: ['nope'] }] })
    expect(a.status).toBe(400)
    expect(a.body.error.message).toMatch(/step 1 \(offset\)|no column named 'nope'/)
    const b = await modeler.post(`${WS}/datasets/${parentId}/condition`).set(CSRF).send({ steps: [{ op: 'trim', from: 100, to: 200 }] })
    expect(b.status).toBe(400)
    expect(b.body.error.message).toMatch(/keeps 0 sample/)
  })

  it('marks a dataset as validation data', async () => {
    const r = await modeler.patch(`${WS}/datasets/${parentId}`).set(CSRF).send({ purpose: 'validation' })
    expect(r.status).toBe(200)
    expect(r.body.purpose).toBe('validation')
    expect((await viewer.patch(`${WS}/datasets/${parentId}`).set(CSRF).send({ purpose: null })).status).toBe(403)
  })
})

describe('bindings', () => {
  it('matches columns by name, converts units, and refuses a unit of the wrong dimension', async () => {
    const tv = await bufferTemplate(t)
    const csv = 'time [s],Q_IN [L/min],t_feed [degC],P_h [kW],level [cm],temp [degF]\n0,120,60,0,40,140\n10,120,60,0,41,141\n'
    const d = (await upload(modeler, pid, csv, 'b2.csv')).body
    const m = await modeler.post(`${WS}/projects/${pid}/bindings/match`).set(CSRF).send({ modelId: tv.modelId, version: tv.number, datasetId: d.id })
    expect(m.status).toBe(200)
    expect(m.body.mapping).toEqual({ inputs: { q_in: 'Q_IN', T_feed: 't_feed', P_h: 'P_h', opening: null }, outputs: { level: 'level', temp: 'temp' } })
    const byName = Object.fromEntries(m.body.checks.map((c: { signal: string }) => [c.signal, c]))
    // 1 L/min = 1e-3 m^3 / 60 s (SI Brochure, 9th ed., table 8: litre); 1 kW = 1000 W
    expect(byName.q_in.scale).toBeCloseTo(1e-3 / 60, 15)
    expect(byName.P_h.scale).toBe(1000)
    // degC → K: offset 273.15 (SI Brochure, 9th ed., Sec. 2.3.1); degF → K: scale 5/9, offset 459.67·5/9
    expect(byName.T_feed.offset).toBeCloseTo(273.15, 9)
    expect(byName.temp.scale).toBeCloseTo(5 / 9, 12)
    expect(byName.temp.offset).toBeCloseTo(459.67 * 5 / 9, 9)
    expect(byName.level.scale).toBeCloseTo(0.01, 15)

    const b = await modeler.post(`${WS}/projects/${pid}/bindings`).set(CSRF).send({ modelId: tv.modelId, version: tv.number, datasetId: d.id, mapping: { inputs: { opening: null }, outputs: {} } })
    expect(b.status).toBe(201)
    expect(b.body.mapping.inputs.q_in).toBe('Q_IN')

    const wrong = await modeler.post(`${WS}/projects/${pid}/bindings`).set(CSRF).send({ modelId: tv.modelId, version: tv.number, datasetId: d.id, mapping: { inputs: {}, outputs: { level: 'temp' } } })
    expect(wrong.status).toBe(400)
    expect(wrong.body.error.message).toMatch(/output 'level'.*'degF'.*does not convert to the sheet's unit 'm'/)

    const unknown = await modeler.post(`${WS}/projects/${pid}/bindings`).set(CSRF).send({ modelId: tv.modelId, version: tv.number, datasetId: d.id, mapping: { inputs: { flow: 'Q_IN' }, outputs: {} } })
    expect(unknown.status).toBe(400)
    expect(unknown.body.error.message).toMatch(/no input named 'flow'/)

    const list = await viewer.get(`${WS}/projects/${pid}/bindings`)
    expect(list.body.bindings).toHaveLength(1)
    const edited = await modeler.put(`${WS}/projects/${pid}/bindings/${b.body.id}`).set(CSRF).send({ mapping: { inputs: { P_h: null }, outputs: {} } })
    expect(edited.status).toBe(200)
    expect(edited.body.mapping.inputs.P_h).toBeNull()
    expect(edited.body.mapping.inputs.q_in).toBe('Q_IN')
  })
})

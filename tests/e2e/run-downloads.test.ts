/**
 * Browser: the downloads of a finished run, clicked as a user does. The demo project's first fit (the
 * invented Tinmoor Works buffer vessel on seeded synthetic traces) is run; on its page the calibrated
 * sheet downloads as a sheet whose param lines carry the run's estimates in the declared units, that
 * compiles, and that carries the result caution; the CSV and JSON hand-over exports download and parse.
 * Needs dist/ (`npx vite build`).
 */
import { readFile } from 'node:fs/promises'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import type { Download, Page } from 'playwright-core'
import { startBrowserRig, type BrowserRig } from '../helpers/browser'
import { demo } from '../helpers/app'
import { seedDemoProject } from '../../server/services/demo-project'
import { RESULT_CAUTION, type OutputTrace, type RunDto } from '../../shared/api/runs'
import type { FitResult } from '../../shared/api/fit'
import { compileModel } from '../../shared/sheet'

let rig: BrowserRig
let page: Page
let run: RunDto & { result: FitResult & { traces: OutputTrace[] } }
let sheetText: string

beforeAll(async () => {
  rig = await startBrowserRig('e2e_downloads')
  await seedDemoProject(rig.context.db)
  const r = await rig.context.database.pool.query("select id from runs where status = 'succeeded' order by id limit 1")
  const id = r.rows[0].id as number
  page = await rig.newPage()
  await rig.signIn(page, demo.viewer)
  await page.waitForURL(/\/w\/tinmoor\//)
  await page.goto(`${rig.baseUrl}/w/tinmoor/runs/${id}`)
  await page.getByTestId('parameter-table').waitFor({ timeout: 60_000 })
  // the run and its fitted sheet as the API gives them, in the page's own session
  run = await page.evaluate(`fetch('/api/workspaces/tinmoor/runs/${id}').then((r) => r.json())`) as typeof run
  const exported = await page.evaluate(`fetch('/api/workspaces/tinmoor/runs/${id}/export?format=json').then((r) => r.json())`) as { sheet: { text: string } }
  sheetText = exported.sheet.text
}, 300_000)
afterAll(async () => { await rig?.close() })

/** Clicks what `click` names and returns the download it starts, with its text. */
async function download(click: () => Promise<void>): Promise<{ file: Download; text: string }> {
  const [file] = await Promise.all([page.waitForEvent('download', { timeout: 30_000 }), click()])
  const path = await file.path()
  return { file, text: await readFile(path, 'utf8') }
}

/** RFC 4180 split of a line of the simple fields these exports write (no quoted commas) */
const cells = (line: string) => line.split(',')

describe('browser: downloads of a finished run', () => {
  it('the calibrated sheet: the estimates in the declared units, it compiles, with the caution', async () => {
    const { file, text } = await download(() => page.getByTestId('calibrated-sheet').click())
    expect(file.suggestedFilename()).toBe(`heated-buffer-vessel-v${run.modelVersion}-run${run.id}.sheet`)
    expect(text).toContain(`# ${RESULT_CAUTION}`)
    const shared = run.result.parameters.filter((p) => p.experiment === null)
    expect(shared.map((p) => p.name)).toEqual(expect.arrayContaining(['Cv', 'UA', 'tau']))
    const m = compileModel(text)
    const before = compileModel(sheetText)
    for (const est of shared) {
      const p = m.params.find((q) => q.name === est.name)
      expect(p, est.name).toBeDefined()
      // the param line is written in the sheet's declared unit, 8 significant digits
      expect(p!.unit).toBe(est.unit)
      const line = new RegExp(`^\\s*param\\s+${est.name}\\s*=\\s*(\\S+)\\s*\\[([^\\]]*)\\]`, 'm').exec(text)
      expect(line, `param line of ${est.name}`).not.toBeNull()
      expect(line![2]).toBe(est.unit)
      expect(Number(line![1])).toBe(Number(est.value.toPrecision(8)))
      // compiled: internal = declared × scale + offset (shared/sheet/compiled.ts)
      expect((p!.value - p!.offset) / p!.scale).toBeCloseTo(Number(est.value.toPrecision(8)), 10)
      // a value the fit moved away from the sheet's own
      expect(p!.value).not.toBe(before.params.find((q) => q.name === est.name)!.value)
    }
    // nothing but the param lines changed: same states, inputs and outputs
    expect(m.states.map((s) => s.name)).toEqual(before.states.map((s) => s.name))
    expect(m.outputs.map((o) => o.name)).toEqual(before.outputs.map((o) => o.name))
    await page.getByText(`Downloaded ${file.suggestedFilename()}.`).waitFor()
  }, 60_000)

  it('the CSV hand-over export: caution, estimates, correlation and time series parse', async () => {
    const { file, text } = await download(() => page.getByRole('button', { name: 'Export CSV' }).click())
    expect(file.suggestedFilename()).toMatch(/\.csv$/)
    const lines = text.split(/\r?\n/)
    expect(lines[0]).toBe(`# ${RESULT_CAUTION}`)
    // the correlation matrix: a header of the names, one row per name, 1 on the diagonal
    const c = lines.indexOf('# correlation of the estimates')
    expect(c).toBeGreaterThan(0)
    const names = run.result.correlation.names
    expect(cells(lines[c + 1])).toEqual(['', ...names])
    names.forEach((n, i) => {
      const row = cells(lines[c + 2 + i])
      expect(row[0]).toBe(n)
      expect(Number(row[1 + i])).toBeCloseTo(1, 12)
    })
    // the estimates: one row per parameter with its unit and value
    const e = lines.indexOf('# estimates')
    expect(e).toBeGreaterThan(0)
    const head = cells(lines[e + 1])
    const col = (name: string) => { const k = head.indexOf(name); expect(k, name).toBeGreaterThanOrEqual(0); return k }
    const estimates = lines.slice(e + 2, lines.indexOf('', e)).map(cells).filter((r) => r[col('kind')] === 'parameter')
    expect(estimates).toHaveLength(run.result.parameters.length)
    for (const est of run.result.parameters.filter((p) => p.experiment === null)) {
      const row = estimates.find((r) => r[col('name')] === est.name)
      expect(row, `estimate row of ${est.name}`).toBeDefined()
      expect(row![col('unit')]).toBe(est.unit)
      expect(Number(row![col('estimate')])).toBe(est.value)
    }
    // the time series: every row has its 8 fields and residual = measured − simulated
    const ts = lines.findIndex((l) => l.startsWith('# time series'))
    expect(ts).toBeGreaterThan(c)
    expect(lines[ts + 1]).toBe('dataset,data,output,unit,t_s,measured,simulated,residual')
    const total = run.result.traces.reduce((s, t) => s + t.t.length, 0)
    const rows = lines.slice(ts + 2, ts + 2 + total).map(cells)
    expect(rows).toHaveLength(total)
    expect(rows.every((r) => r.length === 8)).toBe(true)
    const full = rows.find((r) => r[5] !== '' && r[6] !== '')!
    expect(Number(full[7])).toBeCloseTo(Number(full[5]) - Number(full[6]), 9)
  }, 60_000)

  it('the JSON hand-over export: parses, with the fitted sheet text, the estimates and the caution', async () => {
    const { file, text } = await download(() => page.getByRole('button', { name: 'Export JSON' }).click())
    expect(file.suggestedFilename()).toMatch(/\.json$/)
    const json = JSON.parse(text) as { caution: string; sheet: { text: string; version: number }; result: FitResult }
    expect(json.caution).toBe(RESULT_CAUTION)
    expect(json.sheet.version).toBe(run.modelVersion)
    expect(json.sheet.text).toBe(sheetText)
    expect(() => compileModel(json.sheet.text)).not.toThrow()
    expect(json.result.parameters.map((p) => [p.name, p.value])).toEqual(run.result.parameters.map((p) => [p.name, p.value]))
  }, 60_000)
})

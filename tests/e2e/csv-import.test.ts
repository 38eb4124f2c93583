/**
 * Browser: importing a CSV in two steps. The form states the size limit and refuses a larger file
 * before sending it; a dropped file (drag-and-drop onto the upload area) is read in the page and
 * previewed — header with units, first rows, detected separator and decimal mark — and saved only on
 * request; a faulty file lists all its problems (row and column) and cannot be saved. The traces are
 * invented examples of the Tinmoor Works plant. Screenshots at 1440 and 390 px go to test-artifacts/.
 * Needs dist/ (`npx vite build`).
 */
import { afterAll, beforeAll, expect, it } from 'vitest'
import { mkdtempSync, writeFileSync } from 'node:fs'
import os from 'node:os'
import path from 'node:path'
import type { Page } from 'playwright-core'
import { startBrowserRig, type BrowserRig } from '../helpers/browser'

let rig: BrowserRig
let dir = ''
const LIMIT = 4096
beforeAll(async () => {
  rig = await startBrowserRig('e2e_csv_import')
  rig.context.config.uploadLimitBytes = LIMIT
  dir = mkdtempSync(path.join(os.tmpdir(), 'pewter-csv-'))
})
afterAll(async () => { await rig?.close() })

// a historian export (invented): semicolons, decimal commas, a delimiter ending each line, n/a and -
const EXPORT = [
  '# Tinmoor Works, brine tank T-4 (invented example, not a measurement)',
  't [s];level [m];flow [m3/h];',
  '0;1,25;n/a;',
  '10;1,31;0,5;',
  '20;1,36;-;',
  '30;1,40;0,6;',
].join('\n')

it('states the limit, previews a dropped file and saves it; lists every problem of a faulty file', { timeout: 300_000 }, async () => {
  const page = await rig.newPage()
  const posts: string[] = []
  page.on('request', (r) => { if (r.method() === 'POST' && /\/datasets$/.test(r.url())) posts.push(r.url()) })
  await page.setViewportSize({ width: 1440, height: 900 })
  await rig.signIn(page, 'modeler@tinmoor.example')
  await page.waitForURL(/\/w\/tinmoor\//)
  await page.goto(`${rig.baseUrl}/w/tinmoor/projects`)
  await page.getByRole('button', { name: 'New project' }).click()
  await page.getByLabel('Project name').fill('Browser test: CSV import')
  await page.getByRole('button', { name: 'Create project' }).click()
  await page.waitForURL(/\/projects\/\d+/)

  // the limit is stated in the form
  await expect.poll(() => page.getByTestId('upload-limit').textContent(), { timeout: 30_000 }).toBe('Up to 4 KiB, 500,000 rows and 1,000 columns per file.')

  // a file over the limit is refused in the page: nothing is sent
  const big = path.join(dir, 'too-big.csv')
  writeFileSync(big, `t,y\n${Array.from({ length: 800 }, (_, k) => `${k},${k % 7}`).join('\n')}\n`)
  await input(page).setInputFiles(big)
  await expect(page.getByTestId('upload-error').textContent()).resolves.toMatch(/too-big\.csv is [\d.]+ KiB; the limit is 4 KiB \(4096 bytes\)/)
  expect(posts).toHaveLength(0)

  // drag-and-drop: the file is previewed, not saved
  const dt = await page.evaluateHandle(`(() => {
    const d = new DataTransfer()
    d.items.add(new File([${JSON.stringify(EXPORT)}], 'tank-t4.csv', { type: 'text/csv' }))
    return d
  })()`)
  await page.getByTestId('upload-drop').locator('.el-upload-dragger').dispatchEvent('drop', { dataTransfer: dt })
  await page.getByTestId('upload-preview').waitFor()
  const detected = await page.getByTestId('upload-detected').textContent()
  expect(detected).toMatch(/Separator: semicolon \(;\)/)
  expect(detected).toMatch(/decimal mark: comma \(,\)/)
  expect(detected).toMatch(/time column: t · 4 data rows\s+· 1 note line kept/)
  const table = page.getByTestId('upload-preview-table')
  expect(await table.locator('thead tr').first().locator('th').allTextContents()).toEqual(['t', 'level', 'flow'])
  expect(await table.locator('thead tr').nth(1).locator('th').allTextContents()).toEqual(['s', 'm', 'm3/h'])
  expect(await table.locator('tbody tr').first().locator('td').allTextContents()).toEqual(['0', '1,25', 'n/a'])
  expect(await table.locator('tbody tr').count()).toBe(4)
  expect(posts).toHaveLength(0)
  await rig.screenshot(page, 'csv-import-1-preview-1440')
  await page.setViewportSize({ width: 390, height: 844 })
  expect(Number(await page.evaluate('document.documentElement.scrollWidth - window.innerWidth'))).toBeLessThanOrEqual(0)
  await rig.screenshot(page, 'csv-import-1-preview-390')
  await page.setViewportSize({ width: 1440, height: 900 })

  await page.getByTestId('upload-save').click()
  await page.getByTestId('datasets-table').getByText('tank-t4').waitFor()
  expect(posts).toHaveLength(1)

  // a faulty file: every problem listed with row and column (comment lines counted), no save
  const bad = path.join(dir, 'faulty.csv')
  writeFileSync(bad, '# invented\nt,level,temp\n0,1,20\n1,x,21\n1,2,22\n3,4\n4,5,warm\n')
  await input(page).setInputFiles(bad)
  await page.getByTestId('preview-problems').waitFor()
  const problems = await page.getByTestId('preview-problems').locator('li').allTextContents()
  expect(problems).toEqual([
    'row 6: the row has 2 field(s), the header has 3',
    'row 5, column t: duplicate time 1 (same as row 4)',
    "row 4, column level: 'x' is not a number",
    "row 7, column temp: 'warm' is not a number",
  ])
  expect(await page.getByTestId('preview-problems').textContent()).toMatch(/4 problems to fix before saving/)
  expect(await page.getByTestId('upload-save').isDisabled()).toBe(true)
  await rig.screenshot(page, 'csv-import-2-problems-1440')
  expect(posts).toHaveLength(1)
})

const input = (page: Page) => page.getByTestId('upload-drop').locator('input[type=file]')

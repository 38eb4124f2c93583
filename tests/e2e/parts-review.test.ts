/**
 * Browser: parts in the editor (resolved from the workspace library, hover, completion of handles),
 * the offer to move parts to newer approved versions (flattened diff, before/after simulation,
 * accepted into the draft), review (ask, request changes with a comment, approve from the queue),
 * and bindings that follow versions (edit, delete, version picker, "Run again" filled in).
 * The tank sheets are the Tinmoor Works templates in models/parts; the lag sheet and its trace are
 * invented for this test. Needs dist/ (`npx vite build`). Screenshots go to test-artifacts/.
 */
import { readFileSync } from 'node:fs'
import { join } from 'node:path'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import type { APIRequestContext, Page } from 'playwright-core'
import { startBrowserRig, type BrowserRig } from '../helpers/browser'
import { demo } from '../helpers/app'
import { cursorAt } from '../helpers/monaco'

let rig: BrowserRig
beforeAll(async () => { rig = await startBrowserRig('e2e_parts_review') })
afterAll(async () => { await rig?.close() })

const poll = <T>(fn: () => Promise<T> | T) => expect.poll(fn, { timeout: 30_000, interval: 150 })
const H = { 'X-Requested-With': 'pewter' }
const WS = '/api/workspaces/tinmoor'
const MODELS = join(__dirname, '..', '..', 'models', 'parts')
const tank = readFileSync(join(MODELS, 'gravity-tank@1.sheet'), 'utf8')

async function call(req: APIRequestContext, method: 'get' | 'post' | 'put', url: string, data?: unknown) {
  const r = await req[method](`${rig.baseUrl}${url}`, { headers: H, ...(data !== undefined ? { data } : {}) })
  const body = await r.json().catch(() => null)
  if (r.status() >= 400) throw new Error(`${method.toUpperCase()} ${url}: ${r.status()} ${JSON.stringify(body)}`)
  return body
}

async function signedInPage(email: string): Promise<Page> {
  const page = await rig.newPage()
  await rig.signIn(page, email)
  await page.waitForURL(/\/w\/tinmoor\//)
  return page
}

describe('browser: parts, review and bindings', () => {
  // signed-in pages, opened by whichever test needs one first
  let modelerPage: Promise<Page> | undefined
  let reviewerPage: Promise<Page> | undefined
  const asModeler = () => (modelerPage ??= signedInPage(demo.modeler))
  const asReviewer = () => (reviewerPage ??= signedInPage(demo.reviewer))

  /** The modeler's own part (the gravity tank) and a host sheet (the tank cascade) using its version 1: each test's own. */
  async function partAndHost(page: Page) {
    const part = await call(page.request, 'post', `${WS}/models`, { title: 'Syrup tank part', text: tank })
    const cascade = readFileSync(join(MODELS, 'tank-cascade.sheet'), 'utf8').replace(/^(part\s+\w+\s*=\s*)gravity-tank@1/gm, `$1${part.slug}@1`)
    const host = await call(page.request, 'post', `${WS}/models`, { title: 'Syrup cascade', text: cascade })
    return { partId: part.id as number, slug: part.slug as string, hostId: host.id as number, cascade }
  }

  it('the editor resolves parts from the library, hovers a part and completes part handles', { timeout: 180_000 }, async () => {
    const modeler = await asModeler()
    const { slug, hostId, cascade } = await partAndHost(modeler)

    const asked: string[] = []
    modeler.on('request', (r) => { if (r.url().includes('/parts/texts')) asked.push(r.url()) })
    await modeler.goto(`${rig.baseUrl}/w/tinmoor/library/${hostId}`)
    await modeler.locator('.monaco-editor .view-lines').waitFor()
    // clean only when the parts came from the library
    await poll(() => modeler.locator('[data-testid="problem-count"]').textContent()).toMatch(/checks clean/)
    expect(asked.length).toBeGreaterThan(0)

    const lines = cascade.split('\n')
    const upperLine = lines.findIndex((l) => /^part\s+upper/.test(l)) + 1
    await modeler.locator('.monaco-editor .view-lines').click()
    await cursorAt(modeler, upperLine, 9)
    await modeler.keyboard.press('Control+K')
    await modeler.keyboard.press('Control+I')
    const hover = modeler.locator('.monaco-hover:visible')
    await poll(() => hover.textContent()).toMatch(new RegExp(`part: library model ${slug} \\(Syrup tank part\\), pinned at version 1`))
    expect(await hover.textContent()).toMatch(/upper\.level \[m\]/)
    expect(await hover.textContent()).toMatch(/upper\.q_in \[m\^3\/s\]/)
    await rig.screenshot(modeler, 'parts-editor-hover')
    await modeler.keyboard.press('Escape')

    // completion of a part handle on a new line
    await cursorAt(modeler, upperLine, 1)
    await modeler.keyboard.press('End')
    await modeler.keyboard.press('Enter')
    await modeler.keyboard.type('part middle = syr')
    await modeler.keyboard.press('Control+Space')
    await poll(() => modeler.locator('.suggest-widget:visible').textContent()).toContain(`${slug}@1`)
    await rig.screenshot(modeler, 'parts-editor-completion')
    await modeler.keyboard.press('Escape')
    await modeler.keyboard.press('Control+Z')
  })

  it('offers a newer approved part version with the flattened diff and a before/after simulation, and puts it into the draft', { timeout: 180_000 }, async () => {
    const modeler = await asModeler()
    const reviewer = await asReviewer()
    const { partId, slug, hostId, cascade } = await partAndHost(modeler)
    // a draft of the modeler's own on the host, which accepting the update replaces after asking
    await call(modeler.request, 'put', `${WS}/models/${hostId}/draft`, { text: `${cascade}# draft note (invented)\n`, baseVersion: 1 })
    await call(modeler.request, 'post', `${WS}/models/${partId}/versions`, { text: tank.replace('param  Cd   = 2e-3', 'param  Cd   = 3e-3'), note: 'Cd from the drain test', baseVersion: 1 })
    await call(reviewer.request, 'post', `${WS}/models/${partId}/versions/2/approve`, { comment: 'checked against the drain test' })

    await modeler.goto(`${rig.baseUrl}/w/tinmoor/library/${hostId}`)
    const offer = modeler.locator('[data-testid="part-offer"]')
    await poll(() => offer.textContent()).toMatch(new RegExp(`upper \\(${slug} v1 → v2\\)`))
    await modeler.locator('[data-testid="review-part-update"]').click()
    const dialog = modeler.locator('.el-dialog:visible')
    await poll(() => dialog.locator('[data-testid="part-update-sim-note"]').textContent()).toMatch(/before \(dotted\) and after \(solid\).*largest difference [0-9.e-]+/)
    await poll(() => dialog.locator('[data-testid="part-update-plot"] .main-svg').count()).toBeGreaterThan(0)
    await poll(() => dialog.locator('.monaco-diff-editor').count()).toBeGreaterThan(0)
    await rig.screenshot(modeler, 'parts-update-offer')
    await dialog.locator('[data-testid="accept-part-update"]').click()
    // the draft made above is replaced after asking
    await modeler.locator('.el-message-box').getByRole('button', { name: 'Replace my draft' }).click()
    await poll(async () => (await call(modeler.request, 'get', `${WS}/models/${hostId}`)).draft?.text ?? '').toMatch(new RegExp(`part\\s+upper = ${slug}@2`))
    await poll(() => modeler.locator('[data-testid="editor-status"]').textContent()).toMatch(/Draft saved/)
  })

  it('asks for a review, gets changes requested with a comment, and is approved from the queue', { timeout: 180_000 }, async () => {
    const modeler = await asModeler()
    const reviewer = await asReviewer()
    const { partId } = await partAndHost(modeler)
    await modeler.goto(`${rig.baseUrl}/w/tinmoor/library/${partId}?tab=history`)
    const v2 = modeler.locator('[data-version="1"]')
    await v2.locator('[data-testid="request-review"]').click()
    await modeler.locator('.el-dialog:visible textarea').fill('first tank from the drawing')
    await modeler.locator('[data-testid="review-confirm"]').click()
    await poll(() => v2.textContent()).toMatch(/awaiting review/)

    await reviewer.goto(`${rig.baseUrl}/w/tinmoor/reviews`)
    const item = reviewer.locator(`[data-testid="review-queue"] [data-model="${partId}"][data-version="1"]`)
    await poll(() => item.textContent()).toMatch(/first tank from the drawing/)
    await rig.screenshot(reviewer, 'review-queue')
    await item.locator('a').first().click()
    await reviewer.waitForURL(new RegExp(`/library/${partId}\\?tab=history`))
    const rv = reviewer.locator('[data-version="1"]')
    await rv.locator('[data-testid="request-changes"]').click()
    await reviewer.locator('[data-testid="review-confirm"]').click()
    await poll(() => reviewer.locator('.el-dialog:visible [role="alert"]').textContent()).toMatch(/Say what should change/)
    await reviewer.locator('.el-dialog:visible textarea').fill('State the outlet diameter in the description.')
    await reviewer.locator('[data-testid="review-confirm"]').click()
    await poll(() => rv.locator('[data-testid="review-history"]').textContent()).toMatch(/requested changes.*State the outlet diameter in the description\./s)
    await rv.locator('[data-testid="approve-version"]').click()
    await reviewer.locator('.el-dialog:visible textarea').fill('Fine as a first version.')
    await reviewer.locator('[data-testid="review-confirm"]').click()
    await poll(() => rv.textContent()).toMatch(/Approved by/)
    expect(await rv.locator('[data-testid="review-history"] li').count()).toBe(3)
    await rig.screenshot(reviewer, 'review-history')
    await reviewer.goto(`${rig.baseUrl}/w/tinmoor/reviews`)
    await reviewer.locator('[data-testid="review-queue-empty"]').waitFor()
  })

  it('edits and deletes bindings, picks the version in the fit form, and runs again from a filled-in form', { timeout: 300_000 }, async () => {
    const modeler = await asModeler()
    const lag = (tau: number) => `model "Browser lag"\ntime [s]\ninput u = 0 [1]\nparam tau = ${tau} [s] in [1, 300]\nstate x = 0 [1]\ndx/dt = (u - x) / tau\noutput y = x [1] sigma 0.01\n`
    const m = await call(modeler.request, 'post', `${WS}/models`, { title: 'Browser lag', text: lag(30) })
    await call(modeler.request, 'post', `${WS}/models/${m.id}/versions`, { text: lag(25), note: 'start nearer', baseVersion: 1 })
    const project = await call(modeler.request, 'post', `${WS}/projects`, { name: 'Browser bindings', description: 'made by a test' })
    // synthetic unit step through a 20 s lag (invented data)
    const csv = 'time [s],u [1],y [1]\n' + Array.from({ length: 40 }, (_, i) => `${i * 5},1,${(1 - Math.exp(-(i * 5) / 20)).toFixed(5)}`).join('\n') + '\n'
    const up = await modeler.request.post(`${rig.baseUrl}${WS}/projects/${project.id}/datasets`, { headers: H, multipart: { purpose: 'estimation', file: { name: 'lag.csv', mimeType: 'text/csv', buffer: Buffer.from(csv) } } })
    expect(up.status()).toBe(201)
    const ds = await up.json()
    const keep = await call(modeler.request, 'post', `${WS}/projects/${project.id}/bindings`, { modelId: m.id, version: 1, follow: 'latest', name: 'lag follows latest', datasetId: ds.id })
    const drop = await call(modeler.request, 'post', `${WS}/projects/${project.id}/bindings`, { modelId: m.id, version: 1, name: 'lag pinned', datasetId: ds.id })

    await modeler.goto(`${rig.baseUrl}/w/tinmoor/projects/${project.id}?tab=bindings`)
    await poll(() => modeler.getByTestId('bindings-table').textContent()).toMatch(/Browser lag latest \(now v2\)/)
    await modeler.getByTestId(`edit-binding-${keep.id}`).click()
    const editor = modeler.getByTestId('binding-editor')
    await editor.getByText('the newest approved version').click()
    await poll(() => editor.getByTestId('mapping-table').textContent()).toMatch(/u/)
    await editor.getByTestId('save-binding').click()
    await poll(() => modeler.getByTestId('bindings-table').textContent()).toMatch(/newest approved \(now none\)/)
    await modeler.getByTestId(`delete-binding-${drop.id}`).click()
    await modeler.locator('.el-message-box').getByRole('button', { name: 'Delete' }).click()
    await poll(async () => (await call(modeler.request, 'get', `${WS}/projects/${project.id}/bindings`)).bindings.map((b: { name: string }) => b.name)).toEqual(['lag follows latest'])
    await rig.screenshot(modeler, 'bindings-edited')

    // a fit of version 1 through the binding, finished, then "Run again" with the form filled in
    const run = await call(modeler.request, 'post', `${WS}/projects/${project.id}/runs`, { modelId: m.id, version: 1, bindingId: keep.id, estimation: [ds.id], name: 'lag first', seed: 7 })
    // the worker threads start with the first fit: allow the shared machine its time
    await expect.poll(async () => (await call(modeler.request, 'get', `${WS}/runs/${run.id}`)).status, { timeout: 180_000, interval: 500 }).toBe('succeeded')
    await modeler.goto(`${rig.baseUrl}/w/tinmoor/runs/${run.id}`)
    await modeler.getByTestId('run-again').click({ timeout: 60_000 })
    await modeler.waitForURL(new RegExp(`/projects/${project.id}\\?.*again=${run.id}`), { timeout: 60_000 })
    await poll(() => modeler.getByTestId('run-again-note').textContent()).toMatch(new RegExp(`Filled in from run #${run.id} \\(lag first\\).*same seed \\(7\\)`, 's'))
    expect(await modeler.getByLabel('Run name').inputValue()).toBe('lag first (again)')
    // the version picker keeps the run's version 1 and offers version 2
    await poll(() => modeler.getByTestId('run-version').textContent()).toMatch(/v1 \(not reviewed\)/)
    await modeler.getByTestId('run-version').click()
    await modeler.locator('.el-select-dropdown:visible .el-select-dropdown__item').filter({ hasText: 'v2' }).click()
    await rig.screenshot(modeler, 'run-again-form')
    await modeler.getByTestId('start-fit').click()
    await modeler.waitForURL(/\/runs\/\d+$/, { timeout: 60_000 })
    const again = await call(modeler.request, 'get', `${WS}/runs/${Number(/\/runs\/(\d+)$/.exec(modeler.url())![1])}`)
    expect(again.modelVersion).toBe(2)
    expect(again.settings).toMatchObject({ rerunOf: run.id, seed: 7, bindingId: keep.id, name: 'lag first (again)' })
  })
})

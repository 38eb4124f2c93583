/**
 * The client's data layer against the real server (fresh seeded database with the demo project of the
 * invented Tinmoor Works plant, its first fit executed): each area's store loads with the uniform
 * states, a missing thing is "not found" without an error message, a stale load never overwrites a
 * newer one, every reply passes its shared schema, and stored run results read without casts.
 */
import { seededDemoProject } from '../helpers/demo-project'
import { afterAll, beforeAll, beforeEach, describe, expect, it, vi } from 'vitest'
import { createPinia, setActivePinia } from 'pinia'
import { makeTestApp, demo, type TestApp } from '../helpers/app'
import { clientFetch, type ClientFetch } from '../helpers/client-fetch'
import { DEMO_PASSWORD } from '../../server/db/seed'
import { ApiError } from '../../src/api/client'
import { useSessionStore } from '../../src/stores/useSessionStore'
import { useProjectsStore } from '../../src/stores/useProjectsStore'
import { useDatasetsStore } from '../../src/stores/useDatasetsStore'
import { readRunResult, useRunsStore } from '../../src/stores/useRunsStore'
import { comparedIds, useRunComparisonStore } from '../../src/stores/useRunComparisonStore'
import { useTeamStore } from '../../src/stores/useTeamStore'
import { classifyLoadError, useLoadState } from '../../src/stores/loadState'
import { parseRouteId } from '../../src/composables/useRouteId'
import { readRunState } from '../../src/composables/useRunEvents'
import { describeIssuePath } from '../../src/composables/useFieldErrors'
import { startEvaluation, getRun } from '../../src/api/runs'
import { originalUrl, uploadDataset } from '../../src/api/datasets'
import { terminalStatuses, type RunDto } from '../../shared/api/runs'

let t: TestApp
let client: ClientFetch
let demoProject: number
let demoRun: number
let demoDataset: number

beforeAll(async () => {
  t = await makeTestApp('client_stores')
  const demoSeeded = await seededDemoProject(t.context.db)
  demoProject = demoSeeded.project.id
  demoRun = demoSeeded.run.id
  demoDataset = demoSeeded.datasets[0].id
  client = await clientFetch(t)
})
afterAll(async () => { await client.close(); await t.close() })

beforeEach(async () => {
  client.clearCookies()
  client.notified.length = 0
  setActivePinia(createPinia())
  await useSessionStore().signIn({ email: demo.modeler, password: DEMO_PASSWORD })
})

describe('runs store', () => {
  it('opens a finished run with its result read by the shared schema', async () => {
    const store = useRunsStore()
    const opening = store.open(demo.ws, demoRun)
    expect(store.state.phase).toBe('loading')
    expect(await opening).toBe(true)
    expect(store.state.phase).toBe('ready')
    expect(store.run?.status).toBe('succeeded')
    expect(store.resultProblem).toBeNull()
    expect(store.result?.parameters.length).toBeGreaterThan(0)
    expect(store.result?.traces.length).toBeGreaterThan(0)
    await store.fetchOthers()
    expect(store.others.every((o) => o.id !== demoRun)).toBe(true)
  })

  it('answers "not found" for a missing run without an error message', async () => {
    const store = useRunsStore()
    expect(await store.open(demo.ws, 999_999)).toBe(false)
    expect(store.state.phase).toBe('not-found')
    expect(store.run).toBeNull()
    expect(client.notified).toEqual([])
  })

  it('keeps the newer of two loads that overlap (moving quickly between runs)', async () => {
    const store = useRunsStore()
    const first = store.open(demo.ws, 999_998)
    const second = store.open(demo.ws, demoRun)
    expect(await first).toBe(false) // overtaken: its 404 is not applied
    expect(await second).toBe(true)
    expect(store.state.phase).toBe('ready')
    expect(store.run?.id).toBe(demoRun)
  })

  it('reads a progress event by the shared schema and passes over one of another shape', async () => {
    const { status, progress, error, cancelRequested } = await getRun(demo.ws, demoRun)
    expect(readRunState(JSON.stringify({ status, progress, error, cancelRequested }))).toEqual({ status, progress, error, cancelRequested })
    expect(readRunState(JSON.stringify({ status: 'sleeping', progress: null, error: null, cancelRequested: false }))).toBeNull()
    expect(readRunState('{not json')).toBeNull()
    expect(readRunState(undefined)).toBeNull()
  })

  it('lists the workspace runs', async () => {
    const store = useRunsStore()
    await store.fetchList(demo.ws)
    expect(store.listState.phase).toBe('ready')
    expect(store.list.map((r) => r.id)).toContain(demoRun)
  })

  it('says why a stored result of another shape cannot be shown', () => {
    const odd = { result: { status: 'converged', parameters: 'not a list' } } as unknown as RunDto
    const r = readRunResult(odd)
    expect(r.result).toBeNull()
    expect(r.problem).toMatch(/does not have the shape this version of Pewter reads/)
    expect(readRunResult(null)).toEqual({ result: null, evaluation: null, problem: null })
  })
})

describe('projects, datasets, comparison and team stores', () => {
  it('opens a project with its datasets, bindings and runs, and refuses a missing one as not found', async () => {
    const store = useProjectsStore()
    expect(await store.open(demo.ws, demoProject)).toBe(true)
    expect(store.project?.name).toBe('Buffer vessel B2 calibration (demo)')
    expect(store.datasets.length).toBeGreaterThanOrEqual(1)
    expect(store.runs.map((r) => r.id)).toContain(demoRun)
    await store.open(demo.ws, 999_999)
    expect(store.state.phase).toBe('not-found')
    expect(store.project).toBeNull()
    // the page says "not found" itself: neither the project's nor its lists' 404s raise a message
    await new Promise((r) => setTimeout(r, 50))
    expect(client.notified).toEqual([])
    await store.fetchList(demo.ws)
    expect(store.list.some((p) => p.id === demoProject)).toBe(true)
  })

  it('places the server\'s refusal of a project name as an ApiError with field issues (the form shows it once)', async () => {
    const store = useProjectsStore()
    const err = await store.create(demo.ws, { name: '\u200b', description: '' }).catch((e: unknown) => e)
    expect(err).toBeInstanceOf(ApiError)
    expect((err as ApiError).status).toBe(400)
    expect((err as ApiError).fieldIssues[0]?.path).toBe('name')
    expect(client.notified).toEqual([]) // quiet: the form places it beside the field
  })

  it('opens a dataset with its traces', async () => {
    const store = useDatasetsStore()
    expect(await store.open(demo.ws, demoDataset)).toBe(true)
    expect(store.dataset?.id).toBe(demoDataset)
    expect(store.data?.t.length).toBeGreaterThan(10)
    await store.fetchList(demo.ws)
    expect(store.projectName.get(demoProject)).toBe('Buffer vessel B2 calibration (demo)')
    await store.open(demo.ws, 999_999)
    expect(store.state.phase).toBe('not-found')
  })

  it('loads the team as a modeler (no admin parts) and as an admin', async () => {
    const store = useTeamStore()
    expect(await store.load(demo.ws, false)).toBe(true)
    expect(store.members.map((m) => m.email)).toContain(demo.modeler)
    expect(store.audit).toEqual([])
    client.clearCookies()
    setActivePinia(createPinia())
    await useSessionStore().signIn({ email: demo.admin, password: DEMO_PASSWORD })
    const admin = useTeamStore()
    expect(await admin.load(demo.ws, true)).toBe(true)
    expect(admin.fourEyes).not.toBeNull()
    expect(admin.audit.length).toBeGreaterThan(0)
    expect(admin.isLastAdmin(admin.members.find((m) => m.role === 'admin')!)).toBe(true)
  })
})

/**
 * Wraps the client's fetch for one test: `answer` may reply to a request itself (a Response, or throw as
 * a failed connection does) or pass it on to the server (undefined). `seen` lists "METHOD path" of every call.
 */
function intercept(answer: (path: string, init: RequestInit) => Response | undefined = () => undefined) {
  const inner = globalThis.fetch
  const seen: string[] = []
  vi.stubGlobal('fetch', async (path: string, init: RequestInit = {}) => {
    seen.push(`${init.method ?? 'GET'} ${path}`)
    return answer(path, init) ?? inner(path, init)
  })
  return { seen, restore: () => { vi.stubGlobal('fetch', inner) } }
}
const json = (status: number, body: unknown) => new Response(JSON.stringify(body), { status, headers: { 'Content-Type': 'application/json' } })
const runPath = (rid: number) => `/api/workspaces/${demo.ws}/runs/${rid}`

describe('comparison store', () => {
  it('reads the run ids of a compare address in slot order, the same id twice included', () => {
    expect(comparedIds({ a: '3', b: '5' })).toEqual([3, 5])
    expect(comparedIds({ a: '5', b: '3' })).toEqual([5, 3])
    expect(comparedIds({ a: '3', b: '3' })).toEqual([3, 3])
    expect(comparedIds({ a: '3' })).toEqual([3])
    expect(comparedIds({ a: '-1', b: 'x' })).toEqual([])
    expect(comparedIds({ a: ['3'], b: '1.5' })).toEqual([])
  })

  it('keeps both slots for the same run twice, fetching it once', async () => {
    const calls = intercept()
    const store = useRunComparisonStore()
    const loaded = await store.load(demo.ws, comparedIds({ a: String(demoRun), b: String(demoRun) })).finally(calls.restore)
    expect(loaded).toBe(true)
    expect(store.state.phase).toBe('ready')
    expect(store.runs.map((r) => r.id)).toEqual([demoRun, demoRun])
    expect(calls.seen.filter((c) => c === `GET ${runPath(demoRun)}`)).toHaveLength(1)
    const [a, b] = store.reads
    expect(a?.result?.parameters.length).toBeGreaterThan(0)
    expect(b?.result?.parameters).toEqual(a?.result?.parameters)
    expect(store.diff).toBeNull() // one version: nothing to diff
  })

  it('answers "not found" when either run is missing, without an error message', async () => {
    const store = useRunComparisonStore()
    expect(await store.load(demo.ws, [demoRun, 999_999])).toBe(false)
    expect(store.state.phase).toBe('not-found')
    expect(store.runs).toEqual([])
    expect(client.notified).toEqual([])
  })

  it('shows a failed connection and a reply of the wrong shape as errors, and loads again when asked', async () => {
    const store = useRunComparisonStore()
    const offline = intercept((path) => {
      if (path.startsWith(runPath(demoRun))) throw new TypeError('fetch failed')
      return undefined
    })
    expect(await store.load(demo.ws, [demoRun, demoRun]).finally(offline.restore)).toBe(false)
    expect(store.state.phase).toBe('error')
    expect(store.state.error).toMatch(/cannot be reached/)
    const odd = intercept((path) => (path === runPath(demoRun) ? json(200, { id: demoRun, name: 'no settings' }) : undefined))
    expect(await store.load(demo.ws, [demoRun, demoRun]).finally(odd.restore)).toBe(false)
    expect(store.state.phase).toBe('error')
    expect(store.state.error).toMatch(/unexpected shape/)
    expect(await store.load(demo.ws, [demoRun, demoRun])).toBe(true) // "Try again"
    expect(store.state.phase).toBe('ready')
  })

  it('goes back to idle when the address names fewer than two runs', async () => {
    const store = useRunComparisonStore()
    await store.load(demo.ws, [demoRun, demoRun])
    expect(await store.load(demo.ws, [demoRun])).toBe(false)
    expect(store.state.phase).toBe('idle')
    expect(store.runs).toEqual([])
  })

  it('reads an evaluation run by its own schema, on the run page and beside its fit', async () => {
    const projectsStore = useProjectsStore()
    await projectsStore.open(demo.ws, demoProject)
    const fit = await getRun(demo.ws, demoRun)
    const started = await startEvaluation(demo.ws, demoProject, {
      modelId: fit.modelId, version: fit.modelVersion, bindingId: projectsStore.bindings[0]!.id, datasets: [demoDataset], sourceRunId: demoRun,
    })
    let evaluation = started
    while (!terminalStatuses.includes(evaluation.status)) {
      await new Promise((r) => setTimeout(r, 100))
      evaluation = await getRun(demo.ws, started.id)
    }
    expect(evaluation.status).toBe('succeeded')
    const runsStore = useRunsStore()
    await runsStore.open(demo.ws, evaluation.id)
    expect(runsStore.resultProblem).toBeNull()
    expect(runsStore.result).toBeNull()
    expect(runsStore.evaluation?.parameters.find((p) => p.name === 'Cv')?.source).toBe('run')
    expect(runsStore.evaluation?.traces.length).toBeGreaterThan(0)
    const compare = useRunComparisonStore()
    await compare.load(demo.ws, [demoRun, evaluation.id])
    expect(compare.reads.map((r) => [!!r.result, !!r.evaluation, r.problem])).toEqual([[true, false, null], [false, true, null]])
  }, 120_000)
})

describe('dataset upload', () => {
  it('checks the upload reply against the dataset schema', async () => {
    // the demo record (seeded synthetic data) uploaded again as a new dataset of the project
    const original = await fetch(originalUrl(demo.ws, demoDataset))
    const file = new File([await original.arrayBuffer()], 'b2-again.csv', { type: 'text/csv' })
    const d = await uploadDataset(demo.ws, demoProject, file, { name: 'b2 again', purpose: 'validation' })
    expect(d.name).toBe('b2 again')
    expect(d.purpose).toBe('validation')
    expect(d.columns.length).toBeGreaterThan(1)
    expect(d.preview.length).toBeGreaterThan(0)
    // a reply without the dataset's fields is refused as a bad reply, not passed on to the page
    const odd = intercept((path, init) => (init.method === 'POST' && path.endsWith(`/projects/${demoProject}/datasets`) ? json(201, { id: 1, name: 'half' }) : undefined))
    const err = await uploadDataset(demo.ws, demoProject, file).catch((e: unknown) => e).finally(odd.restore)
    expect(err).toBeInstanceOf(ApiError)
    expect((err as ApiError).code).toBe('bad_reply')
  })
})

describe('pure parts', () => {
  it('classifies failed loads', () => {
    expect(classifyLoadError(new ApiError(404, 'not_found', 'Run not found'))).toEqual({ phase: 'not-found', message: 'Run not found' })
    expect(classifyLoadError(new ApiError(500, 'internal', 'boom'))).toEqual({ phase: 'error', message: 'boom' })
    expect(classifyLoadError(new Error('offline'))).toEqual({ phase: 'error', message: 'offline' })
  })

  it('applies a load only when no newer one started', async () => {
    const s = useLoadState()
    let applied = ''
    let release!: () => void
    const slow = s.track(() => new Promise<string>((r) => { release = () => r('slow') }), (v) => { applied = v })
    await s.track(async () => 'fast', (v) => { applied = v })
    release()
    expect(await slow).toBe(false)
    expect(applied).toBe('fast')
    expect(s.phase.value).toBe('ready')
  })

  it('reads route ids', () => {
    expect(parseRouteId('12')).toBe(12)
    for (const bad of ['0', '-3', '1.5', 'abc', undefined, ['3']]) expect(parseRouteId(bad)).toBe(0)
  })

  it('says where a field problem is in words, not as a path', () => {
    const words = { labels: { free: 'free parameters', lower: 'lower bound' }, rows: { free: ['Cv', 'UA'] } }
    expect(describeIssuePath('free.1.lower', words)).toBe('free parameters, row 2 (UA), lower bound')
    expect(describeIssuePath('free.3.start', words)).toBe('free parameters, row 4, start')
    expect(describeIssuePath('name')).toBe('name')
  })
})

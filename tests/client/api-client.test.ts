/** The client's fetch wrapper, with fetch replaced by a recorder (no server involved). */
import { afterEach, beforeEach, describe, expect, it, vi } from 'vitest'
import { z } from 'zod'
import { ApiError, api, buildUrl, describeError, request, setErrorNotifier, setUnauthenticatedHandler, toFieldIssues } from '../../src/api/client'

interface Call { url: string; init: RequestInit }
let calls: Call[]
let shown: ApiError[]
let reply: () => Response | Promise<Response>

const json = (status: number, body: unknown) =>
  new Response(JSON.stringify(body), { status, headers: { 'Content-Type': 'application/json' } })

beforeEach(() => {
  calls = []
  shown = []
  reply = () => json(200, { ok: true })
  vi.stubGlobal('fetch', async (url: string, init: RequestInit) => {
    calls.push({ url, init })
    return reply()
  })
  setErrorNotifier((e) => shown.push(e))
})
afterEach(() => {
  vi.unstubAllGlobals()
  setErrorNotifier(null)
  setUnauthenticatedHandler(null)
})

const header = (c: Call, name: string) => (c.init.headers as Record<string, string>)[name]

describe('requests', () => {
  it('sends JSON with the CSRF header, same-origin credentials and the JSON content type', async () => {
    await api.post('/api/auth/signin', { email: 'a@b.example', password: 'x' })
    const c = calls[0]!
    expect(c.init.method).toBe('POST')
    expect(c.init.credentials).toBe('same-origin')
    expect(header(c, 'X-Requested-With')).toBe('pewter')
    expect(header(c, 'Content-Type')).toBe('application/json')
    expect(JSON.parse(String(c.init.body))).toEqual({ email: 'a@b.example', password: 'x' })
  })

  it('sends {} as the body of a state-changing call without one', async () => {
    reply = () => new Response(null, { status: 204 })
    await expect(api.post('/api/auth/signout')).resolves.toBeUndefined()
    expect(calls[0]!.init.body).toBe('{}')
    expect(header(calls[0]!, 'Content-Type')).toBe('application/json')
  })

  it('passes FormData through without a JSON content type', async () => {
    const form = new FormData()
    form.append('file', new Blob(['t,y\n0,1\n']), 'trace.csv')
    await api.post('/api/workspaces/tinmoor/datasets', form)
    expect(calls[0]!.init.body).toBe(form)
    expect(header(calls[0]!, 'Content-Type')).toBeUndefined()
    expect(header(calls[0]!, 'X-Requested-With')).toBe('pewter')
  })

  it('sends GET without a body and builds the query string', async () => {
    await api.get('/api/x', { query: { q: 'tank level', page: 2, tag: ['a', 'b'], none: undefined } })
    expect(calls[0]!.init.method).toBe('GET')
    expect(calls[0]!.init.body).toBeUndefined()
    expect(calls[0]!.url).toBe('/api/x?q=tank+level&page=2&tag=a&tag=b')
    expect(buildUrl('/api/x?a=1', { b: true })).toBe('/api/x?a=1&b=true')
    expect(buildUrl('/api/x', { b: null })).toBe('/api/x')
  })

  it('checks the reply against a schema when given one', async () => {
    reply = () => json(200, { id: 3 })
    await expect(api.get('/api/x', { schema: z.object({ id: z.number() }) })).resolves.toEqual({ id: 3 })
    await expect(api.get('/api/x', { schema: z.object({ id: z.string() }) })).rejects.toMatchObject({ code: 'bad_reply' })
  })
})

describe('errors', () => {
  it('turns the server error shape into an ApiError and shows it', async () => {
    reply = () => json(409, { error: { code: 'conflict', message: 'An account with this e-mail exists already.' } })
    const err = await api.post('/api/auth/signup', {}).catch((e: unknown) => e)
    expect(err).toBeInstanceOf(ApiError)
    expect(err).toMatchObject({ status: 409, code: 'conflict', message: 'An account with this e-mail exists already.' })
    expect(shown).toHaveLength(1)
  })

  it('stays silent when asked, for all errors or for listed statuses', async () => {
    reply = () => json(401, { error: { code: 'unauthenticated', message: 'Sign in first.' } })
    await expect(api.get('/api/auth/me', { silent: [401] })).rejects.toMatchObject({ status: 401 })
    await expect(api.get('/api/auth/me', { silent: true })).rejects.toMatchObject({ status: 401 })
    expect(shown).toHaveLength(0)
    await expect(api.get('/api/auth/me', { silent: [409] })).rejects.toMatchObject({ status: 401 })
    expect(shown).toHaveLength(1)
  })

  it('reports an unexpected 401 to the session handler, but not a silenced one', async () => {
    const seen: number[] = []
    setUnauthenticatedHandler((e) => seen.push(e.status))
    reply = () => json(401, { error: { code: 'unauthenticated', message: 'Sign in first.' } })
    await api.get('/api/auth/me', { silent: [401] }).catch(() => {})
    expect(seen).toEqual([])
    await api.get('/api/workspaces/tinmoor/projects').catch(() => {})
    expect(seen).toEqual([401])
  })

  it('maps 400 details to field paths without the request-part prefix', async () => {
    reply = () =>
      json(400, {
        error: {
          code: 'validation_failed',
          message: 'Invalid body',
          details: [
            { path: 'body.password', message: 'at least 8 characters' },
            { path: ['body', 'rows', 3, 'value'], message: 'expected a number' },
          ],
        },
      })
    const err = (await api.post('/api/auth/signup', {}).catch((e: unknown) => e)) as ApiError
    expect(err.fieldIssues).toEqual([
      { path: 'password', message: 'at least 8 characters' },
      { path: 'rows.3.value', message: 'expected a number' },
    ])
    expect(describeError(err)).toBe('Invalid body — password: at least 8 characters; rows.3.value: expected a number')
    expect(toFieldIssues('not a list')).toEqual([])
  })

  it('names a failure without a proper error reply (HTML from a proxy, no server at all)', async () => {
    reply = () => new Response('<html>Bad gateway</html>', { status: 502, statusText: 'Bad Gateway' })
    await expect(request('/api/x')).rejects.toMatchObject({ status: 502, code: 'bad_reply' })
    reply = () => new Response('not json', { status: 200 })
    await expect(request('/api/x')).rejects.toMatchObject({ status: 200, code: 'bad_reply' })
    reply = () => Promise.reject(new TypeError('fetch failed'))
    await expect(request('/api/x')).rejects.toMatchObject({ status: 0, code: 'network_error' })
    expect(shown.map((e) => e.code)).toEqual(['bad_reply', 'bad_reply', 'network_error'])
  })
})

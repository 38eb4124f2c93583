/**
 * Client code (stores, the api module) against the real server in Node: the app listens on a free
 * loopback port and `fetch` is replaced by the Node one with a small cookie jar, standing in for the
 * browser (same origin, so the Origin header is the server's own). Error messages are kept quiet and
 * recorded in `notified`.
 */
import type { Server } from 'node:http'
import { vi } from 'vitest'
import type { TestApp } from './app'
import { setErrorNotifier, type ApiError } from '../../src/api/client'

export interface ClientFetch {
  base: string
  /** every error the api client would have shown as a message */
  notified: ApiError[]
  clearCookies: () => void
  close: () => Promise<void>
}

export async function clientFetch(t: TestApp): Promise<ClientFetch> {
  const server: Server = await new Promise((resolve) => {
    const s = t.app.listen(0, '127.0.0.1', () => resolve(s))
  })
  const addr = server.address()
  const base = `http://127.0.0.1:${typeof addr === 'object' && addr ? addr.port : 0}`
  t.context.config.publicUrl = base
  let cookies = new Map<string, string>()
  const realFetch = globalThis.fetch
  vi.stubGlobal('fetch', async (path: string, init: RequestInit = {}) => {
    const headers = new Headers(init.headers)
    if (cookies.size) headers.set('Cookie', [...cookies].map(([k, v]) => `${k}=${v}`).join('; '))
    if (init.method && init.method !== 'GET') headers.set('Origin', base)
    const res = await realFetch(base + path, { ...init, headers })
    for (const c of res.headers.getSetCookie()) {
      const [pair] = c.split(';')
      const i = pair!.indexOf('=')
      const name = pair!.slice(0, i)
      const value = pair!.slice(i + 1)
      if (value === '' || /expires=Thu, 01 Jan 1970/i.test(c)) cookies.delete(name)
      else cookies.set(name, value)
    }
    return res
  })
  const notified: ApiError[] = []
  setErrorNotifier((e) => { notified.push(e) })
  return {
    base,
    notified,
    clearCookies: () => { cookies = new Map() },
    close: async () => {
      vi.unstubAllGlobals()
      setErrorNotifier(null)
      await new Promise<void>((resolve) => server.close(() => resolve()))
    },
  }
}

/**
 * The client's only door to the server: a small wrapper around fetch.
 *
 * - Sends cookies (same origin), `Accept: application/json`, and on every request the
 *   `X-Requested-With: pewter` header the server's CSRF defence asks for on state-changing calls.
 * - Encodes plain objects as JSON; FormData (file uploads) is passed through untouched.
 * - Parses the JSON reply, optionally checks it against a zod schema from shared/api.
 * - Turns every failure into an {@link ApiError} carrying the server's `{ error: { code, message, details } }`,
 *   and shows it as an Element Plus message unless the caller asks for silence.
 */
import { ElMessage } from 'element-plus'
import type { ZodType } from 'zod'
import { apiErrorReply } from '@shared/api/errors'

/** Codes the client itself produces when no proper error reply arrives. */
export const clientErrorCodes = {
  network: 'network_error',
  badReply: 'bad_reply',
} as const

/** One field problem from a 400 reply: `path` is dotted ("email", "rows.3.value"). */
export interface FieldIssue {
  path: string
  message: string
}

export class ApiError extends Error {
  readonly status: number
  readonly code: string
  readonly details: unknown

  constructor(status: number, code: string, message: string, details?: unknown) {
    super(message)
    this.name = 'ApiError'
    this.status = status
    this.code = code
    this.details = details
  }

  /** The field issues of a validation reply (empty when there are none). */
  get fieldIssues(): FieldIssue[] {
    return toFieldIssues(this.details)
  }
}

/** Normalises 400 details (`[{ path, message }]`, path as string or array) into dotted paths. */
export function toFieldIssues(details: unknown): FieldIssue[] {
  if (!Array.isArray(details)) return []
  const out: FieldIssue[] = []
  for (const d of details) {
    if (typeof d !== 'object' || d === null) continue
    const rec = d as Record<string, unknown>
    const message = typeof rec.message === 'string' ? rec.message : ''
    let segments: string[]
    if (Array.isArray(rec.path)) segments = rec.path.map((s) => String(s))
    else if (typeof rec.path === 'string') segments = rec.path.split('.').filter((s) => s !== '')
    else segments = []
    // The server may prefix the request part the issue belongs to; the form only knows field names.
    if (segments.length > 1 && ['body', 'query', 'params'].includes(segments[0]!)) segments = segments.slice(1)
    out.push({ path: segments.join('.'), message })
  }
  return out
}

export type ErrorNotifier = (error: ApiError) => void

const defaultNotifier: ErrorNotifier = (error) => {
  ElMessage({ type: 'error', message: describeError(error), grouping: true, showClose: true, duration: 5000 })
}

let notifier: ErrorNotifier = defaultNotifier
let unauthenticatedHandler: ((error: ApiError) => void) | null = null

/** Replace how errors are shown (tests use this; pass null to restore the Element Plus message). */
export function setErrorNotifier(fn: ErrorNotifier | null): void {
  notifier = fn ?? defaultNotifier
}

/**
 * Called when a request answers 401 although the caller did not expect it (a session that expired
 * while the page was open). main.ts wires this to clear the session store and go to sign-in.
 */
export function setUnauthenticatedHandler(fn: ((error: ApiError) => void) | null): void {
  unauthenticatedHandler = fn
}

/** A one-line text for people: the server's message plus the first field issues of a 400. */
export function describeError(error: ApiError): string {
  const issues = error.fieldIssues
  if (issues.length === 0) return error.message
  const shown = issues.slice(0, 3).map((i) => (i.path ? `${i.path}: ${i.message}` : i.message))
  const more = issues.length > 3 ? ` (and ${issues.length - 3} more)` : ''
  return `${error.message} — ${shown.join('; ')}${more}`
}

export type QueryValue = string | number | boolean | null | undefined

export interface RequestOptions<T> {
  method?: 'GET' | 'POST' | 'PUT' | 'PATCH' | 'DELETE'
  /** A plain object/array (sent as JSON) or FormData (sent as multipart). */
  body?: unknown
  query?: Record<string, QueryValue | readonly QueryValue[]>
  /** Check the reply against this schema; a mismatch becomes an ApiError with code 'bad_reply'. */
  schema?: ZodType<T>
  /**
   * Show no message: `true` for every error, or a list of statuses to keep quiet about
   * (e.g. `[401]` for the session probe, `[409]` when the form shows the conflict itself).
   */
  silent?: boolean | readonly number[]
  signal?: AbortSignal
  headers?: Record<string, string>
}

export function buildUrl(path: string, query?: RequestOptions<unknown>['query']): string {
  if (!query) return path
  const params = new URLSearchParams()
  for (const [key, value] of Object.entries(query)) {
    const values = Array.isArray(value) ? value : [value]
    for (const v of values as QueryValue[]) {
      if (v === undefined || v === null) continue
      params.append(key, String(v))
    }
  }
  const qs = params.toString()
  if (!qs) return path
  return path + (path.includes('?') ? '&' : '?') + qs
}

function isSilent(silent: RequestOptions<unknown>['silent'], status: number): boolean {
  if (silent === true) return true
  if (Array.isArray(silent)) return silent.includes(status)
  return false
}

async function readJson(res: Response): Promise<{ ok: true; value: unknown } | { ok: false }> {
  const text = await res.text()
  if (text === '') return { ok: true, value: undefined }
  try {
    return { ok: true, value: JSON.parse(text) as unknown }
  } catch {
    return { ok: false }
  }
}

export async function request<T = unknown>(path: string, options: RequestOptions<T> = {}): Promise<T> {
  const method = options.method ?? (options.body === undefined ? 'GET' : 'POST')
  const headers: Record<string, string> = {
    Accept: 'application/json',
    'X-Requested-With': 'pewter',
    ...options.headers,
  }
  let body: string | FormData | undefined
  if (options.body instanceof FormData) {
    body = options.body
  } else if (options.body !== undefined) {
    headers['Content-Type'] = 'application/json'
    body = JSON.stringify(options.body)
  } else if (method !== 'GET') {
    // State-changing calls always carry a JSON body, `{}` when the caller has none.
    headers['Content-Type'] = 'application/json'
    body = '{}'
  }

  const fail = (error: ApiError): never => {
    if (error.status === 401 && unauthenticatedHandler && !isSilent(options.silent, 401)) {
      unauthenticatedHandler(error)
    }
    if (!isSilent(options.silent, error.status)) notifier(error)
    throw error
  }

  let res: Response
  try {
    res = await fetch(buildUrl(path, options.query), {
      method,
      headers,
      body,
      credentials: 'same-origin',
      signal: options.signal,
    })
  } catch (cause) {
    if (cause instanceof DOMException && cause.name === 'AbortError') throw cause
    return fail(new ApiError(0, clientErrorCodes.network, 'The Pewter server cannot be reached. Check your connection and try again.'))
  }

  const parsed = await readJson(res)

  if (!res.ok) {
    if (parsed.ok) {
      const reply = apiErrorReply.safeParse(parsed.value)
      if (reply.success) {
        const e = reply.data.error
        return fail(new ApiError(res.status, e.code, e.message, e.details))
      }
    }
    return fail(new ApiError(res.status, clientErrorCodes.badReply, `The server answered ${res.status} ${res.statusText}`.trim()))
  }

  if (!parsed.ok) {
    return fail(new ApiError(res.status, clientErrorCodes.badReply, 'The server sent a reply that is not JSON.'))
  }
  if (options.schema) {
    const checked = options.schema.safeParse(parsed.value)
    if (!checked.success) {
      return fail(new ApiError(res.status, clientErrorCodes.badReply, `The server's reply to ${method} ${path} has an unexpected shape.`, checked.error.issues))
    }
    return checked.data
  }
  return parsed.value as T
}

type NoBody<T> = Omit<RequestOptions<T>, 'method' | 'body'>

/** Shorthands; `api.post('/api/x', body, { silent: [409] })`. */
export const api = {
  get: <T = unknown>(path: string, options?: NoBody<T>) => request<T>(path, { ...options, method: 'GET' }),
  post: <T = unknown>(path: string, body?: unknown, options?: NoBody<T>) =>
    request<T>(path, { ...options, method: 'POST', body }),
  put: <T = unknown>(path: string, body?: unknown, options?: NoBody<T>) =>
    request<T>(path, { ...options, method: 'PUT', body }),
  patch: <T = unknown>(path: string, body?: unknown, options?: NoBody<T>) =>
    request<T>(path, { ...options, method: 'PATCH', body }),
  delete: <T = unknown>(path: string, options?: NoBody<T>) => request<T>(path, { ...options, method: 'DELETE' }),
}

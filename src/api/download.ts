/// <reference lib="dom" />
/** Saving a file the API sends as an attachment: fetched (so errors come back as ApiError), then handed to the browser. */
import { ApiError } from './client'

/** Fetches `url` (same origin, with the CSRF header) and saves the reply under its Content-Disposition name; returns that name. */
export async function downloadFrom(url: string, init: RequestInit, fallbackName: string): Promise<string> {
  const r = await fetch(url, { credentials: 'same-origin', ...init, headers: { 'X-Requested-With': 'pewter', ...(init.headers as Record<string, string> | undefined) } })
  if (!r.ok) {
    const j = (await r.json().catch(() => null)) as { error?: { code: string; message: string; details?: unknown } } | null
    throw new ApiError(r.status, j?.error?.code ?? 'http_error', j?.error?.message ?? `The download failed (HTTP ${r.status}).`, j?.error?.details)
  }
  const name = /filename="([^"]+)"/.exec(r.headers.get('Content-Disposition') ?? '')?.[1] ?? fallbackName
  const href = URL.createObjectURL(await r.blob())
  const a = document.createElement('a')
  a.href = href
  a.download = name
  document.body.appendChild(a)
  a.click()
  a.remove()
  setTimeout(() => URL.revokeObjectURL(href), 10_000)
  return name
}

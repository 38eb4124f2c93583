/** Hand-over calls: linear analysis and exports of a model version (shapes from shared/api/handover.ts). */
import { linearAnalysis, type ExportBody, type LinearAnalysis } from '@shared/api/handover'
import { api, ApiError } from './client'

const base = (ws: string, modelId: number, n: number) => `/api/workspaces/${encodeURIComponent(ws)}/models/${modelId}/versions/${n}`

export type HandoverRequest = Partial<Omit<ExportBody, 'format'>>

export function linearize(ws: string, modelId: number, n: number, body: HandoverRequest): Promise<LinearAnalysis> {
  // a sheet without an operating point answers 400 with the reason: the panel shows it itself
  return api.post(`${base(ws, modelId, n)}/linearize`, body, { schema: linearAnalysis, silent: [400] })
}

/** Fetches an export and hands it to the browser as a download. */
export async function downloadExport(ws: string, modelId: number, n: number, body: HandoverRequest & { format: ExportBody['format'] }): Promise<string> {
  const r = await fetch(`${base(ws, modelId, n)}/export`, {
    method: 'POST',
    credentials: 'same-origin',
    headers: { 'Content-Type': 'application/json', 'X-Requested-With': 'pewter' },
    body: JSON.stringify(body),
  })
  if (!r.ok) {
    const j = (await r.json().catch(() => null)) as { error?: { code: string; message: string; details?: unknown } } | null
    throw new ApiError(r.status, j?.error?.code ?? 'http_error', j?.error?.message ?? `The export failed (HTTP ${r.status}).`, j?.error?.details)
  }
  const name = /filename="([^"]+)"/.exec(r.headers.get('Content-Disposition') ?? '')?.[1] ?? `export-${body.format}`
  const url = URL.createObjectURL(await r.blob())
  const a = document.createElement('a')
  a.href = url
  a.download = name
  document.body.appendChild(a)
  a.click()
  a.remove()
  setTimeout(() => URL.revokeObjectURL(url), 10_000)
  return name
}

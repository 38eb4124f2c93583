/** Hand-over calls: linear analysis and exports of a model version (shapes from shared/api/handover.ts). */
import { linearAnalysis, type ExportBody, type LinearAnalysis } from '@shared/api/handover'
import { api } from './client'
import { downloadFrom } from './download'

const base = (ws: string, modelId: number, n: number) => `/api/workspaces/${encodeURIComponent(ws)}/models/${modelId}/versions/${n}`

export type HandoverRequest = Partial<Omit<ExportBody, 'format'>>

export function linearize(ws: string, modelId: number, n: number, body: HandoverRequest): Promise<LinearAnalysis> {
  // a sheet without an operating point answers 400 with the reason: the panel shows it itself
  return api.post(`${base(ws, modelId, n)}/linearize`, body, { schema: linearAnalysis, silent: [400] })
}

/** Fetches an export and hands it to the browser as a download. */
export function downloadExport(ws: string, modelId: number, n: number, body: HandoverRequest & { format: ExportBody['format'] }): Promise<string> {
  return downloadFrom(`${base(ws, modelId, n)}/export`, { method: 'POST', headers: { 'Content-Type': 'application/json' }, body: JSON.stringify(body) }, `export-${body.format}`)
}

/** Parts from the workspace library: shapes from shared/api/parts.ts. */
import {
  acceptPartUpdatesReply, partCatalogueReply, partTextsReply, partUpdatesReply,
  type AcceptPartUpdatesBody, type AcceptPartUpdatesReply, type PartCatalogueReply, type PartUpdatesReply,
} from '@shared/api/parts'
import { api } from './client'

const wsBase = (ws: string) => `/api/workspaces/${encodeURIComponent(ws)}`

/** The texts of the parts a sheet needs, keyed `handle@version` (the editor's live check; quiet on failure). */
export async function partTexts(ws: string, text: string, signal?: AbortSignal): Promise<Record<string, string>> {
  return (await api.post(`${wsBase(ws)}/parts/texts`, { text }, { schema: partTextsReply, silent: true, signal })).texts
}

export function partCatalogue(ws: string): Promise<PartCatalogueReply> {
  return api.get(`${wsBase(ws)}/parts`, { schema: partCatalogueReply, silent: true })
}

export function partUpdates(ws: string, modelId: number): Promise<PartUpdatesReply> {
  return api.get(`${wsBase(ws)}/models/${modelId}/part-updates`, { schema: partUpdatesReply })
}

export function acceptPartUpdates(ws: string, modelId: number, body: AcceptPartUpdatesBody): Promise<AcceptPartUpdatesReply> {
  return api.post(`${wsBase(ws)}/models/${modelId}/part-updates`, body, { schema: acceptPartUpdatesReply })
}

/** Calls of the model library routes; every shape comes from shared/api/models.ts. */
import {
  checkReply, diffReply, draftDto, listModelsReply, modelDetailDto, reviewQueueReply, versionDto, type ReviewQueueReply,
  type CheckReply, type CreateModelBody, type DiffReply, type DraftDto, type ForkBody, type ListModelsReply,
  type ModelDetailDto, type PublishBody, type UpdateModelBody, type VersionDto,
} from '@shared/api/models'
import { api, type QueryValue } from './client'

const base = (ws: string) => `/api/workspaces/${encodeURIComponent(ws)}/models`

export interface ListFilters {
  q?: string
  tag?: string
  owner?: number | 'me'
  status?: 'draft' | 'approved'
  page?: number
  pageSize?: number
}

export function listModels(ws: string, filters: ListFilters = {}): Promise<ListModelsReply> {
  const query: Record<string, QueryValue> = {}
  for (const [k, v] of Object.entries(filters)) if (v !== undefined && v !== '' && v !== null) query[k] = v as QueryValue
  return api.get(base(ws), { query, schema: listModelsReply })
}

export function getModel(ws: string, id: number): Promise<ModelDetailDto> {
  return api.get(`${base(ws)}/${id}`, { schema: modelDetailDto })
}

export function createModel(ws: string, body: CreateModelBody): Promise<ModelDetailDto> {
  // a sheet with errors answers 400 with the diagnostics: the form shows them itself
  return api.post(base(ws), body, { schema: modelDetailDto, silent: [400] })
}

export function updateModel(ws: string, id: number, body: UpdateModelBody): Promise<ModelDetailDto> {
  return api.patch(`${base(ws)}/${id}`, body, { schema: modelDetailDto })
}

export function getVersion(ws: string, id: number, n: number | 'latest'): Promise<VersionDto> {
  return api.get(`${base(ws)}/${id}/versions/${n}`, { schema: versionDto })
}

export function saveDraft(ws: string, id: number, text: string, baseVersion: number): Promise<DraftDto> {
  return api.put(`${base(ws)}/${id}/draft`, { text, baseVersion }, { schema: draftDto })
}

export function discardDraft(ws: string, id: number): Promise<void> {
  return api.delete(`${base(ws)}/${id}/draft`)
}

/** 409 (a newer version exists) and 400 (sheet errors) are shown by the publish dialog. */
export function publishVersion(ws: string, id: number, body: PublishBody): Promise<VersionDto> {
  return api.post(`${base(ws)}/${id}/versions`, body, { schema: versionDto, silent: [400, 409] })
}

export function approveVersion(ws: string, id: number, n: number, comment = ''): Promise<VersionDto> {
  return api.post(`${base(ws)}/${id}/versions/${n}/approve`, { comment }, { schema: versionDto })
}

export function requestReview(ws: string, id: number, n: number, comment = ''): Promise<VersionDto> {
  return api.post(`${base(ws)}/${id}/versions/${n}/review-request`, { comment }, { schema: versionDto })
}

export function requestChanges(ws: string, id: number, n: number, comment: string): Promise<VersionDto> {
  return api.post(`${base(ws)}/${id}/versions/${n}/request-changes`, { comment }, { schema: versionDto })
}

/** Versions awaiting review in the workspace. */
export function reviewQueue(ws: string): Promise<ReviewQueueReply> {
  return api.get(`/api/workspaces/${encodeURIComponent(ws)}/reviews`, { schema: reviewQueueReply })
}

export function forkModel(ws: string, id: number, body: ForkBody): Promise<ModelDetailDto> {
  return api.post(`${base(ws)}/${id}/fork`, body, { schema: modelDetailDto })
}

export function diffModel(ws: string, id: number, q: { from: number | 'latest'; to: number | 'latest'; fromModel?: number }): Promise<DiffReply> {
  return api.get(`${base(ws)}/${id}/diff`, { query: q, schema: diffReply })
}

export function deleteModel(ws: string, id: number): Promise<void> {
  return api.delete(`${base(ws)}/${id}`)
}

export function checkSheet(text: string): Promise<CheckReply> {
  return api.post('/api/check', { text }, { schema: checkReply })
}

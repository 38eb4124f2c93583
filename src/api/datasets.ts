/**
 * Calls of the dataset routes (measured traces: upload, read, mark, condition); every reply, the upload's
 * included, is checked against its schema from shared/api/datasets.ts.
 */
import {
  datasetDataDto, datasetDto, datasetListReply, uploadLimits,
  type ConditioningStep, type DatasetDto, type DatasetPurpose,
} from '@shared/api/datasets'
import { api, request } from './client'
import { quietNotFound, workspacePath as w } from './paths'

/** The workspace's datasets, or one project's. */
export const listDatasets = (ws: string, pid?: number) =>
  api.get(pid ? `${w(ws)}/projects/${pid}/datasets` : `${w(ws)}/datasets`, { schema: datasetListReply, ...(pid ? quietNotFound : {}) }).then((r) => r.datasets)
export const getDataset = (ws: string, did: number) => api.get(`${w(ws)}/datasets/${did}`, { schema: datasetDto, ...quietNotFound })
/** Every sample, unthinned (the quick simulation compares and scores on all of them). */
export const getDatasetSamples = (ws: string, did: number) =>
  api.get(`${w(ws)}/datasets/${did}/data`, { schema: datasetDataDto, ...quietNotFound })
export const getDatasetData = (ws: string, did: number, maxPoints = 5000) =>
  api.get(`${w(ws)}/datasets/${did}/data`, { query: { maxPoints }, schema: datasetDataDto, ...quietNotFound })
export const markDataset = (ws: string, did: number, purpose: DatasetPurpose | null) => api.patch(`${w(ws)}/datasets/${did}`, { purpose }, { schema: datasetDto })
export const conditionDataset = (ws: string, did: number, body: { name?: string; steps: ConditioningStep[] }) =>
  api.post(`${w(ws)}/datasets/${did}/condition`, body, { schema: datasetDto })
export const deleteDataset = (ws: string, did: number) => api.delete(`${w(ws)}/datasets/${did}`)
export const originalUrl = (ws: string, did: number) => `${w(ws)}/datasets/${did}/original`

/** Upload a CSV (multipart field `file`); a refused file answers 400 naming row and column, shown by the caller. */
export function uploadDataset(ws: string, pid: number, file: File, fields: { name?: string; purpose?: DatasetPurpose | '' } = {}): Promise<DatasetDto> {
  const form = new FormData()
  if (fields.name) form.append('name', fields.name)
  if (fields.purpose) form.append('purpose', fields.purpose)
  form.append('file', file)
  return request(`${w(ws)}/projects/${pid}/datasets`, { method: 'POST', body: form, schema: datasetDto, silent: [400, 413] })
}

/** What an upload may hold (file size, rows, columns), stated and checked in the upload form. */
export const getUploadLimits = (ws: string) => api.get(`${w(ws)}/datasets/limits`, { schema: uploadLimits })

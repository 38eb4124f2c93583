/**
 * Calls of the project, dataset, binding and run routes (the fit side of the workspace); every reply is
 * checked against its schema from shared/api, as in the other api modules. Loads of one thing keep a 404
 * quiet: the page shows "not found" with a way back itself.
 */
import { z } from 'zod'
import { exampleProjectReply, projectDto, type ProjectDto } from '@shared/api/projects'
import {
  bindingDto, columnMapping, datasetDataDto, datasetDto, datasetSummaryDto, mappingCheck,
  type BindingFollow, type ColumnMapping, type ConditioningStep, type DatasetDto, type DatasetPurpose, type UpdateBindingBody,
} from '@shared/api/datasets'
import { landscapeDto, parameterSetDto, runDto, runSummaryDto, type CreateEvaluationBody, type CreateRunBody } from '@shared/api/runs'
import { versionDto } from '@shared/api/models'
import { downloadFrom } from './download'
import { api, request } from './client'
import { uploadLimits, type UploadLimits } from '@shared/api/datasets'

const w = (ws: string) => `/api/workspaces/${encodeURIComponent(ws)}`
const quiet404 = { silent: [404] } as const

// projects
export const listProjects = (ws: string) =>
  api.get(`${w(ws)}/projects`, { schema: z.object({ projects: z.array(projectDto) }) }).then((r) => r.projects)
export const getProject = (ws: string, pid: number) => api.get(`${w(ws)}/projects/${pid}`, { schema: projectDto, ...quiet404 })
/** 400 (field problems) is shown by the form beside its fields. */
export const createProject = (ws: string, body: { name: string; description: string }): Promise<ProjectDto> =>
  api.post(`${w(ws)}/projects`, body, { schema: projectDto, silent: [400] })
export const deleteProject = (ws: string, pid: number) => api.delete(`${w(ws)}/projects/${pid}`)
/** "Try it on example data": a project with a template, invented traces and a first fit (queued). */
export const startExampleProject = (ws: string) => api.post(`${w(ws)}/projects/example`, {}, { schema: exampleProjectReply })

// datasets
export const listDatasets = (ws: string, pid?: number) =>
  api.get(pid ? `${w(ws)}/projects/${pid}/datasets` : `${w(ws)}/datasets`, { schema: z.object({ datasets: z.array(datasetSummaryDto) }) }).then((r) => r.datasets)
export const getDataset = (ws: string, did: number) => api.get(`${w(ws)}/datasets/${did}`, { schema: datasetDto, ...quiet404 })
export const getDatasetData = (ws: string, did: number, maxPoints = 5000) =>
  api.get(`${w(ws)}/datasets/${did}/data`, { query: { maxPoints }, schema: datasetDataDto, ...quiet404 })
/** Every sample, unthinned (the quick simulation compares and scores on all of them). */
export const getDatasetSamples = (ws: string, did: number) =>
  api.get(`${w(ws)}/datasets/${did}/data`, { schema: datasetDataDto, ...quiet404 })
export const markDataset = (ws: string, did: number, purpose: DatasetPurpose | null) => api.patch(`${w(ws)}/datasets/${did}`, { purpose }, { schema: datasetDto })
export const conditionDataset = (ws: string, did: number, body: { name?: string; steps: ConditioningStep[] }) =>
  api.post(`${w(ws)}/datasets/${did}/condition`, body, { schema: datasetDto })
export const deleteDataset = (ws: string, did: number) => api.delete(`${w(ws)}/datasets/${did}`)
export const originalUrl = (ws: string, did: number) => `${w(ws)}/datasets/${did}/original`

/** Upload a CSV (multipart field `file`); a refused file answers 400 naming row and column, shown by the caller. */
export function uploadDataset(ws: string, pid: number, file: File, fields: { name?: string; purpose?: DatasetPurpose | '' } = {}) {
  const form = new FormData()
  if (fields.name) form.append('name', fields.name)
  if (fields.purpose) form.append('purpose', fields.purpose)
  form.append('file', file)
  // not yet checked with datasetDto: the upload reply's shape differs from it in the browser flow (to be aligned)
  return request<DatasetDto>(`${w(ws)}/projects/${pid}/datasets`, { method: 'POST', body: form, silent: [400, 413] })
}

/** What an upload may hold (file size, rows, columns), stated and checked in the upload form. */
export const getUploadLimits = (ws: string) => api.get<UploadLimits>(`${w(ws)}/datasets/limits`, { schema: uploadLimits })

// bindings
export const listBindings = (ws: string, pid: number) =>
  api.get(`${w(ws)}/projects/${pid}/bindings`, { schema: z.object({ bindings: z.array(bindingDto) }) }).then((r) => r.bindings)
export const matchMapping = (ws: string, pid: number, body: { modelId: number; version: number; datasetId: number; mapping?: ColumnMapping }) =>
  api.post(`${w(ws)}/projects/${pid}/bindings/match`, body, { schema: z.object({ mapping: columnMapping, checks: z.array(mappingCheck) }) })
export const createBinding = (ws: string, pid: number, body: { modelId: number; version: number; follow?: BindingFollow; datasetId: number; name?: string; mapping?: ColumnMapping }) =>
  api.post(`${w(ws)}/projects/${pid}/bindings`, body, { schema: bindingDto })
export const updateBinding = (ws: string, pid: number, bid: number, body: UpdateBindingBody) =>
  api.put(`${w(ws)}/projects/${pid}/bindings/${bid}`, body, { schema: bindingDto })
export const deleteBinding = (ws: string, pid: number, bid: number) => api.delete(`${w(ws)}/projects/${pid}/bindings/${bid}`)

// runs
export const listRuns = (ws: string, pid?: number) =>
  api.get(pid ? `${w(ws)}/projects/${pid}/runs` : `${w(ws)}/runs`, { schema: z.object({ runs: z.array(runSummaryDto) }) }).then((r) => r.runs)
export const getRun = (ws: string, rid: number) => api.get(`${w(ws)}/runs/${rid}`, { schema: runDto, ...quiet404 })
/** 400 (field problems) is shown by the fit form beside its fields. */
export const startRun = (ws: string, pid: number, body: Partial<CreateRunBody>) => api.post(`${w(ws)}/projects/${pid}/runs`, body, { schema: runDto, silent: [400] })
export const cancelRun = (ws: string, rid: number) => api.post(`${w(ws)}/runs/${rid}/cancel`, undefined, { schema: runDto })
export const startEvaluation = (ws: string, pid: number, body: Partial<CreateEvaluationBody>) => api.post(`${w(ws)}/projects/${pid}/evaluations`, body, { schema: runDto })
export const deleteRun = (ws: string, rid: number) => api.delete(`${w(ws)}/runs/${rid}`)
export const runEventsUrl = (ws: string, rid: number) => `${w(ws)}/runs/${rid}/events`
export const exportUrl = (ws: string, rid: number, format: 'csv' | 'json') => `${w(ws)}/runs/${rid}/export?format=${format}`
/** Saves the fitted version's sheet with the estimates written into its param lines; returns the file name. */
export const downloadCalibratedSheet = (ws: string, rid: number) => downloadFrom(`${w(ws)}/runs/${rid}/sheet`, {}, `run-${rid}.sheet`)
export const getLandscape = (ws: string, rid: number, a: string, b: string, n = 21) =>
  api.get(`${w(ws)}/runs/${rid}/landscape`, { query: { a, b, n }, schema: landscapeDto })
export const saveParameterSet = (ws: string, rid: number, name: string) => api.post(`${w(ws)}/runs/${rid}/parameter-sets`, { name }, { schema: parameterSetDto })
export const listParameterSets = (ws: string, pid: number) =>
  api.get(`${w(ws)}/projects/${pid}/parameter-sets`, { schema: z.object({ parameterSets: z.array(parameterSetDto) }) }).then((r) => r.parameterSets)
export const publishFromRun = (ws: string, rid: number, note: string) =>
  api.post(`${w(ws)}/runs/${rid}/publish`, { note }, { schema: versionDto.extend({ changed: z.array(z.string()) }) })
export const listModelParameterSets = (ws: string, modelId: number) =>
  api.get(`${w(ws)}/models/${modelId}/parameter-sets`, { schema: z.object({ parameterSets: z.array(parameterSetDto) }) }).then((r) => r.parameterSets)

/** Calls of the project, dataset, binding and run routes; every shape comes from shared/api. */
import { exampleProjectReply, type ProjectDto } from '@shared/api/projects'
import type {
  BindingDto, ColumnMapping, ConditioningStep, DatasetDataDto, DatasetDto, DatasetPurpose, DatasetSummaryDto, MappingCheck,
} from '@shared/api/datasets'
import type { CreateEvaluationBody, CreateRunBody, LandscapeDto, ParameterSetDto, RunDto, RunSummaryDto } from '@shared/api/runs'
import type { VersionDto } from '@shared/api/models'
import { api, request } from './client'

const w = (ws: string) => `/api/workspaces/${encodeURIComponent(ws)}`

// projects
export const listProjects = (ws: string) => api.get<{ projects: ProjectDto[] }>(`${w(ws)}/projects`).then((r) => r.projects)
export const getProject = (ws: string, pid: number) => api.get<ProjectDto>(`${w(ws)}/projects/${pid}`)
export const createProject = (ws: string, body: { name: string; description: string }) => api.post<ProjectDto>(`${w(ws)}/projects`, body, { silent: [400] })
export const deleteProject = (ws: string, pid: number) => api.delete(`${w(ws)}/projects/${pid}`)
/** "Try it on example data": a project with a template, invented traces and a first fit (queued). */
export const startExampleProject = (ws: string) => api.post(`${w(ws)}/projects/example`, {}, { schema: exampleProjectReply })

// datasets
export const listDatasets = (ws: string, pid?: number) =>
  api.get<{ datasets: DatasetSummaryDto[] }>(pid ? `${w(ws)}/projects/${pid}/datasets` : `${w(ws)}/datasets`).then((r) => r.datasets)
export const getDataset = (ws: string, did: number) => api.get<DatasetDto>(`${w(ws)}/datasets/${did}`)
export const getDatasetData = (ws: string, did: number, maxPoints = 5000) => api.get<DatasetDataDto>(`${w(ws)}/datasets/${did}/data`, { query: { maxPoints } })
export const markDataset = (ws: string, did: number, purpose: DatasetPurpose | null) => api.patch<DatasetDto>(`${w(ws)}/datasets/${did}`, { purpose })
export const conditionDataset = (ws: string, did: number, body: { name?: string; steps: ConditioningStep[] }) =>
  api.post<DatasetDto>(`${w(ws)}/datasets/${did}/condition`, body)
export const deleteDataset = (ws: string, did: number) => api.delete(`${w(ws)}/datasets/${did}`)
export const originalUrl = (ws: string, did: number) => `${w(ws)}/datasets/${did}/original`

/** Upload a CSV (multipart field `file`); a refused file answers 400 naming row and column, shown by the caller. */
export function uploadDataset(ws: string, pid: number, file: File, fields: { name?: string; purpose?: DatasetPurpose | '' } = {}) {
  const form = new FormData()
  if (fields.name) form.append('name', fields.name)
  if (fields.purpose) form.append('purpose', fields.purpose)
  form.append('file', file)
  return request<DatasetDto>(`${w(ws)}/projects/${pid}/datasets`, { method: 'POST', body: form, silent: [400, 413] })
}

// bindings
export const listBindings = (ws: string, pid: number) => api.get<{ bindings: BindingDto[] }>(`${w(ws)}/projects/${pid}/bindings`).then((r) => r.bindings)
export const matchMapping = (ws: string, pid: number, body: { modelId: number; version: number; datasetId: number; mapping?: ColumnMapping }) =>
  api.post<{ mapping: ColumnMapping; checks: MappingCheck[] }>(`${w(ws)}/projects/${pid}/bindings/match`, body)
export const createBinding = (ws: string, pid: number, body: { modelId: number; version: number; datasetId: number; name?: string; mapping?: ColumnMapping }) =>
  api.post<BindingDto>(`${w(ws)}/projects/${pid}/bindings`, body)

// runs
export const listRuns = (ws: string, pid?: number) =>
  api.get<{ runs: RunSummaryDto[] }>(pid ? `${w(ws)}/projects/${pid}/runs` : `${w(ws)}/runs`).then((r) => r.runs)
export const getRun = (ws: string, rid: number) => api.get<RunDto>(`${w(ws)}/runs/${rid}`)
export const startRun = (ws: string, pid: number, body: Partial<CreateRunBody>) => api.post<RunDto>(`${w(ws)}/projects/${pid}/runs`, body)
export const startEvaluation = (ws: string, pid: number, body: Partial<CreateEvaluationBody>) => api.post<RunDto>(`${w(ws)}/projects/${pid}/evaluations`, body)
export const cancelRun = (ws: string, rid: number) => api.post<RunDto>(`${w(ws)}/runs/${rid}/cancel`)
export const deleteRun = (ws: string, rid: number) => api.delete(`${w(ws)}/runs/${rid}`)
export const rerun = (ws: string, rid: number) => api.post<RunDto>(`${w(ws)}/runs/${rid}/rerun`)
export const runEventsUrl = (ws: string, rid: number) => `${w(ws)}/runs/${rid}/events`
export const exportUrl = (ws: string, rid: number, format: 'csv' | 'json') => `${w(ws)}/runs/${rid}/export?format=${format}`
export const getLandscape = (ws: string, rid: number, a: string, b: string, n = 21) => api.get<LandscapeDto>(`${w(ws)}/runs/${rid}/landscape`, { query: { a, b, n } })
export const saveParameterSet = (ws: string, rid: number, name: string) => api.post<ParameterSetDto>(`${w(ws)}/runs/${rid}/parameter-sets`, { name })
export const listParameterSets = (ws: string, pid: number) => api.get<{ parameterSets: ParameterSetDto[] }>(`${w(ws)}/projects/${pid}/parameter-sets`).then((r) => r.parameterSets)
export const publishFromRun = (ws: string, rid: number, note: string) => api.post<VersionDto & { changed: string[] }>(`${w(ws)}/runs/${rid}/publish`, { note })

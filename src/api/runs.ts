/**
 * Calls of the fit-run routes (start, follow, cancel, results, exports, parameter sets, publishing the
 * estimates as a model version); every reply is checked against its schema from shared/api/runs.ts.
 */
import {
  landscapeDto, parameterSetDto, parameterSetListReply, publishFromRunReply, runDto, runListReply,
  type CreateEvaluationBody, type CreateRunBody,
} from '@shared/api/runs'
import { api } from './client'
import { downloadFrom } from './download'
import { quietNotFound, workspacePath as w } from './paths'

/** The workspace's runs, or one project's. */
export const listRuns = (ws: string, pid?: number) =>
  api.get(pid ? `${w(ws)}/projects/${pid}/runs` : `${w(ws)}/runs`, { schema: runListReply, ...(pid ? quietNotFound : {}) }).then((r) => r.runs)
export const getRun = (ws: string, rid: number) => api.get(`${w(ws)}/runs/${rid}`, { schema: runDto, ...quietNotFound })
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

// parameter sets (saved from a run's estimates) and publishing the estimates as a new model version
export const saveParameterSet = (ws: string, rid: number, name: string) => api.post(`${w(ws)}/runs/${rid}/parameter-sets`, { name }, { schema: parameterSetDto })
export const listParameterSets = (ws: string, pid: number) =>
  api.get(`${w(ws)}/projects/${pid}/parameter-sets`, { schema: parameterSetListReply, ...quietNotFound }).then((r) => r.parameterSets)
export const listModelParameterSets = (ws: string, modelId: number) =>
  api.get(`${w(ws)}/models/${modelId}/parameter-sets`, { schema: parameterSetListReply }).then((r) => r.parameterSets)
export const publishFromRun = (ws: string, rid: number, note: string) => api.post(`${w(ws)}/runs/${rid}/publish`, { note }, { schema: publishFromRunReply })

/** Calls of a project's bindings (a model version's signals matched to a dataset's columns); replies checked with shared/api/datasets.ts. */
import {
  bindingDto, bindingListReply, matchReply,
  type BindingFollow, type ColumnMapping, type UpdateBindingBody,
} from '@shared/api/datasets'
import { api } from './client'
import { quietNotFound, workspacePath as w } from './paths'

const bindingsOf = (ws: string, pid: number) => `${w(ws)}/projects/${pid}/bindings`

export const listBindings = (ws: string, pid: number) => api.get(bindingsOf(ws, pid), { schema: bindingListReply, ...quietNotFound }).then((r) => r.bindings)
/** The automatic mapping of a model version's signals to a dataset's columns, each checked. */
export const matchMapping = (ws: string, pid: number, body: { modelId: number; version: number; datasetId: number; mapping?: ColumnMapping }) =>
  api.post(`${bindingsOf(ws, pid)}/match`, body, { schema: matchReply })
export const createBinding = (ws: string, pid: number, body: { modelId: number; version: number; follow?: BindingFollow; datasetId: number; name?: string; mapping?: ColumnMapping }) =>
  api.post(bindingsOf(ws, pid), body, { schema: bindingDto })
export const updateBinding = (ws: string, pid: number, bid: number, body: UpdateBindingBody) =>
  api.put(`${bindingsOf(ws, pid)}/${bid}`, body, { schema: bindingDto })
export const deleteBinding = (ws: string, pid: number, bid: number) => api.delete(`${bindingsOf(ws, pid)}/${bid}`)

/** Calls of the project routes; every reply is checked against its schema from shared/api/projects.ts. */
import { exampleProjectReply, projectDto, projectListReply, type ProjectDto } from '@shared/api/projects'
import { api } from './client'
import { quietNotFound, workspacePath as w } from './paths'

export const listProjects = (ws: string) => api.get(`${w(ws)}/projects`, { schema: projectListReply }).then((r) => r.projects)
export const getProject = (ws: string, pid: number) => api.get(`${w(ws)}/projects/${pid}`, { schema: projectDto, ...quietNotFound })
/** 400 (field problems) is shown by the form beside its fields. */
export const createProject = (ws: string, body: { name: string; description: string }): Promise<ProjectDto> =>
  api.post(`${w(ws)}/projects`, body, { schema: projectDto, silent: [400] })
export const deleteProject = (ws: string, pid: number) => api.delete(`${w(ws)}/projects/${pid}`)
/** "Try it on example data": a project with a template, invented traces and a first fit (queued). */
export const startExampleProject = (ws: string) => api.post(`${w(ws)}/projects/example`, {}, { schema: exampleProjectReply })

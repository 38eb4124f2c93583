/**
 * Projects as the client sees them: the workspace's list, and the project that is open with its
 * datasets, bindings, fit runs and saved parameter sets.
 */
import { defineStore } from 'pinia'
import { shallowRef } from 'vue'
import type { ProjectDto } from '@shared/api/projects'
import type { BindingDto, DatasetPurpose, DatasetSummaryDto } from '@shared/api/datasets'
import type { ParameterSetDto, RunSummaryDto } from '@shared/api/runs'
import * as projectsApi from '../api/projects'
import { listDatasets, markDataset as markDatasetPurpose } from '../api/datasets'
import { listBindings } from '../api/bindings'
import { listParameterSets, listRuns } from '../api/runs'
import { useLoadState } from './loadState'

export const useProjectsStore = defineStore('projects', () => {
  // ── the list ──
  const list = shallowRef<ProjectDto[]>([])
  const listState = useLoadState()
  async function fetchList(ws: string): Promise<void> {
    await listState.track(() => projectsApi.listProjects(ws), (p) => { list.value = p })
  }
  /** Throws the ApiError of a 400 for the form to place beside its fields. */
  async function create(ws: string, body: { name: string; description: string }): Promise<ProjectDto> {
    const p = await projectsApi.createProject(ws, body)
    list.value = [...list.value, p]
    return p
  }

  // ── the open project ──
  const project = shallowRef<ProjectDto | null>(null)
  const datasets = shallowRef<DatasetSummaryDto[]>([])
  const bindings = shallowRef<BindingDto[]>([])
  const runs = shallowRef<RunSummaryDto[]>([])
  const parameterSets = shallowRef<ParameterSetDto[]>([])
  const state = useLoadState()
  let openWs = ''

  /** Opens project `pid`; the same project again reloads in place (after an upload, a new binding). */
  async function open(ws: string, pid: number): Promise<boolean> {
    const same = project.value?.id === pid && openWs === ws
    if (!same) {
      project.value = null
      datasets.value = []
      bindings.value = []
      runs.value = []
      parameterSets.value = []
    }
    openWs = ws
    return state.track(
      () => Promise.all([projectsApi.getProject(ws, pid), listDatasets(ws, pid), listBindings(ws, pid), listRuns(ws, pid), listParameterSets(ws, pid)]),
      ([p, d, b, r, s]) => {
        project.value = p
        datasets.value = d
        bindings.value = b
        runs.value = r
        parameterSets.value = s
      },
      { quiet: same },
    )
  }

  async function reload(): Promise<void> {
    if (project.value) await open(openWs, project.value.id)
  }

  async function markDataset(did: number, purpose: DatasetPurpose | null): Promise<void> {
    const d = await markDatasetPurpose(openWs, did, purpose)
    datasets.value = datasets.value.map((x) => (x.id === did ? { ...x, purpose: d.purpose } : x))
  }

  return { list, listState, fetchList, create, project, datasets, bindings, runs, parameterSets, state, open, reload, markDataset }
})

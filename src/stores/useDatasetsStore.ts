/** Datasets as the client sees them: the workspace's list (with project names) and the dataset that is open with its traces. */
import { defineStore } from 'pinia'
import { computed, shallowRef } from 'vue'
import type { DatasetDataDto, DatasetDto, DatasetPurpose, DatasetSummaryDto, ConditioningStep } from '@shared/api/datasets'
import type { ProjectDto } from '@shared/api/projects'
import * as datasetsApi from '../api/datasets'
import { listProjects } from '../api/projects'
import { useLoadState } from './loadState'

export const useDatasetsStore = defineStore('datasets', () => {
  // ── the workspace's list ──
  const list = shallowRef<DatasetSummaryDto[]>([])
  const projects = shallowRef<ProjectDto[]>([])
  const listState = useLoadState()
  const projectName = computed(() => new Map(projects.value.map((p) => [p.id, p.name])))
  async function fetchList(ws: string): Promise<void> {
    await listState.track(() => Promise.all([datasetsApi.listDatasets(ws), listProjects(ws)]), ([d, p]) => {
      list.value = d
      projects.value = p
    })
  }

  // ── the open dataset ──
  const dataset = shallowRef<DatasetDto | null>(null)
  const data = shallowRef<DatasetDataDto | null>(null)
  const state = useLoadState()
  let openWs = ''

  async function open(ws: string, did: number, maxPoints = 4000): Promise<boolean> {
    const same = dataset.value?.id === did && openWs === ws
    if (!same) { dataset.value = null; data.value = null }
    openWs = ws
    return state.track(() => Promise.all([datasetsApi.getDataset(ws, did), datasetsApi.getDatasetData(ws, did, maxPoints)]), ([d, v]) => {
      dataset.value = d
      data.value = v
    }, { quiet: same })
  }

  async function mark(purpose: DatasetPurpose | null): Promise<void> {
    const d = dataset.value
    if (d) dataset.value = await datasetsApi.markDataset(openWs, d.id, purpose)
  }

  /** A new dataset made by conditioning the open one. */
  function condition(body: { name?: string; steps: ConditioningStep[] }): Promise<DatasetDto> {
    const d = dataset.value
    if (!d) return Promise.reject(new Error('no dataset is open'))
    return datasetsApi.conditionDataset(openWs, d.id, body)
  }

  return { list, projects, projectName, listState, fetchList, dataset, data, state, open, mark, condition }
})

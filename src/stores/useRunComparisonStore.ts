/**
 * Two runs side by side (the compare page): the runs of the address's two slots, each stored result
 * read by its kind's schema, and — for two versions of one model — what changed between the versions.
 * The same run may fill both slots (`?a=5&b=5`); it is fetched once.
 */
import { defineStore } from 'pinia'
import { computed, shallowRef } from 'vue'
import type { RunDto } from '@shared/api/runs'
import type { DiffReply } from '@shared/api/models'
import { getRun } from '../api/runs'
import { diffModel } from '../api/models'
import { useLoadState } from './loadState'
import { readRunResult } from './useRunsStore'

/** The run ids of a compare address (`?a=3&b=5`) in slot order: positive integers only, at most two; equal ids keep both slots. */
export function comparedIds(query: Record<string, unknown>): number[] {
  return [query.a, query.b]
    .map((v) => (typeof v === 'string' && /^\d+$/.test(v) ? Number(v) : NaN))
    .filter((n) => Number.isSafeInteger(n) && n > 0)
}

/** Fetches each distinct id once and fills the slots in order. */
async function fetchSlots(ws: string, ids: number[]): Promise<RunDto[]> {
  const distinct = [...new Set(ids)]
  const loaded = new Map((await Promise.all(distinct.map((id) => getRun(ws, id)))).map((r, i) => [distinct[i], r]))
  return ids.flatMap((id) => loaded.get(id) ?? [])
}

/** The model-version diff of two runs of one model on different versions; best effort (null when it cannot be had). */
function versionDiff(ws: string, [a, b]: RunDto[]): Promise<DiffReply | null> {
  if (!a || !b || a.modelId !== b.modelId || a.modelVersion === b.modelVersion) return Promise.resolve(null)
  return diffModel(ws, a.modelId, { from: a.modelVersion, to: b.modelVersion }).catch(() => null)
}

export const useRunComparisonStore = defineStore('runComparison', () => {
  /** the runs of the two slots, in the address's order */
  const runs = shallowRef<RunDto[]>([])
  const diff = shallowRef<DiffReply | null>(null)
  /** each slot's stored result, checked (a fit's or an evaluation's) */
  const reads = computed(() => runs.value.map(readRunResult))
  const state = useLoadState()

  /** Loads the runs of `ids` (two slots); fewer than two ids: nothing to compare (phase idle). */
  async function load(ws: string, ids: number[]): Promise<boolean> {
    if (ids.length < 2) {
      runs.value = []
      diff.value = null
      state.reset()
      return false
    }
    return state.track(async () => {
      const pair = await fetchSlots(ws, ids)
      return { pair, d: await versionDiff(ws, pair) }
    }, ({ pair, d }) => {
      runs.value = pair
      diff.value = d
    })
  }

  return { runs, diff, reads, state, load }
})

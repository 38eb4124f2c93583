/** Two runs side by side (the compare page) and a run's printable report share this: runs loaded by id. */
import { defineStore } from 'pinia'
import { shallowRef } from 'vue'
import type { RunDto } from '@shared/api/runs'
import * as fits from '../api/fits'
import { useLoadState } from './loadState'
import { readRunResult } from './useRunsStore'

/** The run ids of a compare address (`?a=3&b=5`): positive integers only, at most two, distinct. */
export function comparedIds(query: Record<string, unknown>): number[] {
  const ids = [query.a, query.b].map((v) => Number(v)).filter((n) => Number.isInteger(n) && n > 0)
  return [...new Set(ids)]
}

export const useRunComparisonStore = defineStore('runComparison', () => {
  const runs = shallowRef<RunDto[]>([])
  const state = useLoadState()

  async function load(ws: string, ids: number[]): Promise<void> {
    if (ids.length < 2) {
      runs.value = []
      state.reset()
      return
    }
    await state.track(() => Promise.all(ids.map((id) => fits.getRun(ws, id))), (r) => { runs.value = r })
  }

  return { runs, state, load, readResult: readRunResult }
})

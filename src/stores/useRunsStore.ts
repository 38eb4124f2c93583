/**
 * Fit runs as the client sees them: the workspace's list, and the run that is open (its stored result
 * checked against the shared schema, the project's other finished runs to compare with).
 */
import { defineStore } from 'pinia'
import { computed, shallowRef } from 'vue'
import { storedRunResult, type RunDto, type RunSummaryDto, type StoredRunResult } from '@shared/api/runs'
import * as fits from '../api/fits'
import { useLoadState } from './loadState'

/** The result of a run, checked; `problem` says why a stored result cannot be shown (an older engine's shape). */
export function readRunResult(run: RunDto | null): { result: StoredRunResult | null; problem: string | null } {
  if (!run?.result) return { result: null, problem: null }
  const parsed = storedRunResult.safeParse(run.result)
  if (parsed.success) return { result: parsed.data, problem: null }
  const issue = parsed.error.issues[0]
  const where = issue?.path.length ? ` (at ${issue.path.join('.')})` : ''
  return { result: null, problem: `The stored result of this run does not have the shape this version of Pewter reads${where}: ${issue?.message ?? 'unknown difference'}.` }
}

export const useRunsStore = defineStore('runs', () => {
  // ── the workspace's list ──
  const list = shallowRef<RunSummaryDto[]>([])
  const listState = useLoadState()
  async function fetchList(ws: string): Promise<void> {
    await listState.track(() => fits.listRuns(ws), (r) => { list.value = r })
  }

  // ── the open run ──
  const run = shallowRef<RunDto | null>(null)
  const others = shallowRef<RunSummaryDto[]>([])
  const state = useLoadState()
  let openWs = ''
  const read = computed(() => readRunResult(run.value))
  /** the result when the run stored one (finished, or cancelled after some starts finished) */
  const result = computed(() => read.value.result)
  const resultProblem = computed(() => read.value.problem)

  /** Opens run `rid`: a different run shows the loading state, the same one reloads in place. */
  async function open(ws: string, rid: number): Promise<boolean> {
    const same = run.value?.id === rid && openWs === ws
    if (!same) run.value = null
    openWs = ws
    return state.track(() => fits.getRun(ws, rid), (r) => { run.value = r }, { quiet: same })
  }

  /** The project's other finished runs (to compare with); best effort, no state of its own. */
  async function fetchOthers(): Promise<void> {
    const r = run.value
    if (!r) return
    const rows = await fits.listRuns(openWs, r.projectId).catch(() => [] as RunSummaryDto[])
    if (run.value?.id === r.id) others.value = rows.filter((x) => x.id !== r.id && x.status === 'succeeded')
  }

  function close(): void {
    state.reset()
    run.value = null
    others.value = []
  }

  return { list, listState, fetchList, run, others, state, result, resultProblem, open, fetchOthers, close }
})

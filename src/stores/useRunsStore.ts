/**
 * Fit runs as the client sees them: the workspace's list, and the run that is open (its stored result
 * checked against the shared schema, the project's other finished runs to compare with).
 */
import { defineStore } from 'pinia'
import { computed, shallowRef } from 'vue'
import type { z } from 'zod'
import {
  storedEvaluationResult, storedRunResult,
  type RunDto, type RunSummaryDto, type StoredEvaluationResult, type StoredRunResult,
} from '@shared/api/runs'
import * as runsApi from '../api/runs'
import { useLoadState } from './loadState'

/** A run's stored result read by its kind's schema: a fit's in `result`, an evaluation's (nothing free) in `evaluation`. */
export interface RunResultRead {
  result: StoredRunResult | null
  evaluation: StoredEvaluationResult | null
  /** why a stored result cannot be shown (an older engine's shape), with where it differs */
  problem: string | null
}

function unreadable(error: z.ZodError): RunResultRead {
  const issue = error.issues[0]
  const where = issue?.path.length ? ` (at ${issue.path.join('.')})` : ''
  return { result: null, evaluation: null, problem: `The stored result of this run does not have the shape this version of Pewter reads${where}: ${issue?.message ?? 'unknown difference'}.` }
}

/** The result of a run, checked against the shared schema of its kind; never cast. */
export function readRunResult(run: RunDto | null): RunResultRead {
  if (!run?.result) return { result: null, evaluation: null, problem: null }
  if (run.kind === 'evaluation') {
    const parsed = storedEvaluationResult.safeParse(run.result)
    return parsed.success ? { result: null, evaluation: parsed.data, problem: null } : unreadable(parsed.error)
  }
  const parsed = storedRunResult.safeParse(run.result)
  return parsed.success ? { result: parsed.data, evaluation: null, problem: null } : unreadable(parsed.error)
}

export const useRunsStore = defineStore('runs', () => {
  // ── the workspace's list ──
  const list = shallowRef<RunSummaryDto[]>([])
  const listState = useLoadState()
  async function fetchList(ws: string): Promise<void> {
    await listState.track(() => runsApi.listRuns(ws), (r) => { list.value = r })
  }

  // ── the open run ──
  const run = shallowRef<RunDto | null>(null)
  const others = shallowRef<RunSummaryDto[]>([])
  const state = useLoadState()
  let openWs = ''
  const read = computed(() => readRunResult(run.value))
  /** the result when the run stored one (finished, or cancelled after some starts finished) */
  const result = computed(() => read.value.result)
  /** an evaluation run's result (nothing free: the values it ran with, figures, traces) */
  const evaluation = computed(() => read.value.evaluation)
  const resultProblem = computed(() => read.value.problem)

  /** Opens run `rid`: a different run shows the loading state, the same one reloads in place. */
  async function open(ws: string, rid: number): Promise<boolean> {
    const same = run.value?.id === rid && openWs === ws
    if (!same) run.value = null
    openWs = ws
    return state.track(() => runsApi.getRun(ws, rid), (r) => { run.value = r }, { quiet: same })
  }

  /** The project's other finished runs (to compare with); best effort, no state of its own. */
  async function fetchOthers(): Promise<void> {
    const r = run.value
    if (!r) return
    const rows = await runsApi.listRuns(openWs, r.projectId).catch(() => [] as RunSummaryDto[])
    if (run.value?.id === r.id) others.value = rows.filter((x) => x.id !== r.id && x.status === 'succeeded')
  }

  function close(): void {
    state.reset()
    run.value = null
    others.value = []
  }

  return { list, listState, fetchList, run, others, state, result, evaluation, resultProblem, open, fetchOthers, close }
})

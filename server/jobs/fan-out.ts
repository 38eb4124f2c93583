/**
 * Multi-start fits fan out over the pool's threads: the thread executing a run hands its start plans
 * to the parent (the pool, on the process's main thread), which lends idle threads as helpers. The
 * run's own thread and the helpers take plans one at a time from the same list (work sharing), so no
 * thread waits on another and a busy pool simply leaves more starts to the run's own thread. The
 * outcomes go back to the run's thread, which picks the best (shared/engine/fit pickBest) as in a
 * sequential fit: the result does not depend on how the starts were spread.
 *
 * Messages on a MessagePort (thread → parent): { type: 'starts', plans } | { type: 'next' } |
 * { type: 'outcome', outcome, threadId } | { type: 'progress', info } (a helper's iterations, passed on
 * to the run's thread, which writes the live cost curve and estimates); (parent → thread):
 * { type: 'plan', plan } | { type: 'outcomes', outcomes } | { type: 'progress', info } |
 * { type: 'finished', withEstimate, planned } (after each outcome: the starts ended with an estimate) | { abort }.
 */
import type { MessagePort } from 'node:worker_threads'
import { hasEstimate, type StartOutcome, type StartPlan } from '../../shared/engine/fit/driver'
import type { ProgressInfo } from '../../shared/engine/fit/lsq'

export type ThreadMessage =
  | { type: 'starts'; plans: StartPlan[]; deadline: number | null }
  | { type: 'next' }
  | { type: 'outcome'; outcome: StartOutcome; threadId: number }
  | { type: 'progress'; info: ProgressInfo }

/** A helper reports its iterations at most this often (the run's thread throttles its writes again). */
export const HELPER_PROGRESS_MS = 100

export interface FanOutRecord { plans: number; helpers: number; threadIds: number[] }

export const failedOutcome = (plan: StartPlan, reason: string): StartOutcome => ({
  index: plan.index, start: plan.theta, theta: plan.theta, cost: NaN, objective: NaN, status: 'failed', convergedBy: null, reason,
  iterations: 0, simulations: 0, costHistory: [], weights: null,
})

/** The parent's side of one run's fan-out. */
export class FanOut {
  private queue: StartPlan[]
  private held = new Map<MessagePort, StartPlan | null>()
  private outcomes: StartOutcome[] = []
  private done = false
  /** outcomes that ended with an estimate */
  private withEstimate = 0
  readonly threadIds = new Set<number>()
  helpers = 0

  constructor(plans: StartPlan[], private runPort: MessagePort, private onOutcome: (done: number, total: number, best: number | null) => void, readonly deadline: number | null = null) {
    this.queue = [...plans].sort((a, b) => a.index - b.index)
    this.total = plans.length
  }
  readonly total: number

  get remaining() { return this.queue.length }

  /** A port (the run's thread or a helper) asks for the next plan. */
  next(port: MessagePort) {
    const plan = this.done ? null : this.queue.shift() ?? null
    this.held.set(port, plan)
    port.postMessage({ type: 'plan', plan })
  }

  outcome(port: MessagePort, o: StartOutcome, threadId: number) {
    this.held.set(port, null)
    this.threadIds.add(threadId)
    this.outcomes.push(o)
    if (hasEstimate(o)) this.withEstimate++
    if (!this.done) this.runPort.postMessage({ type: 'finished', withEstimate: this.withEstimate, planned: this.total })
    const best = this.outcomes.reduce<number | null>((b, x) => (Number.isFinite(x.cost) && (b === null || x.cost < b) ? x.cost : b), null)
    if (this.outcomes.length < this.total) this.onOutcome(this.outcomes.length, this.total, best)
    this.maybeFinish()
  }

  /** A helper's iteration: handed to the run's thread, which reports every start's progress. */
  progress(info: ProgressInfo) {
    if (!this.done) this.runPort.postMessage({ type: 'progress', info })
  }

  /** A helper thread died or ended: a plan it held is recorded as failed. */
  lost(port: MessagePort, reason: string) {
    const plan = this.held.get(port)
    this.held.delete(port)
    if (plan) this.outcomes.push(failedOutcome(plan, `its worker thread stopped: ${reason}`))
    this.maybeFinish()
  }

  /** Cancelled or timed out: hand out nothing more and answer the run's thread with what is there. */
  stop() {
    this.queue = []
    this.finish()
  }

  private maybeFinish() {
    if (this.outcomes.length >= this.total) this.finish()
  }

  private finish() {
    if (this.done) return
    this.done = true
    this.runPort.postMessage({ type: 'outcomes', outcomes: this.outcomes })
  }

  record(): FanOutRecord {
    return { plans: this.total, helpers: this.helpers, threadIds: [...this.threadIds].sort((a, b) => a - b) }
  }
}

/** A helper's progress callback: its iterations posted to the parent, at most every HELPER_PROGRESS_MS. */
export function helperProgress(port: MessagePort, now: () => number = Date.now): (info: ProgressInfo) => void {
  let last = -Infinity
  return (info) => {
    const t = now()
    if (t - last < HELPER_PROGRESS_MS) return
    last = t
    port.postMessage({ type: 'progress', info } satisfies ThreadMessage)
  }
}

/**
 * A thread's loop over the shared list: asks for a plan (`nextPlan`), fits it (a throw becomes a failed
 * outcome), posts the outcome, until no plan is left or `stopped()`. Returns how many it fitted.
 */
export async function fitSharedPlans(port: MessagePort, nextPlan: () => Promise<StartPlan | null>, fit: (plan: StartPlan) => Promise<StartOutcome>, threadId: number, stopped: () => boolean = () => false): Promise<number> {
  let fitted = 0
  while (!stopped()) {
    const plan = await nextPlan()
    if (!plan) break
    let outcome: StartOutcome
    try { outcome = await fit(plan) } catch (e) { outcome = failedOutcome(plan, e instanceof Error ? e.message : String(e)) }
    port.postMessage({ type: 'outcome', outcome, threadId } satisfies ThreadMessage)
    fitted++
  }
  return fitted
}

/** Asks the parent for plans one at a time; `deliver` answers the oldest request, `end` answers all with null. */
export function planRequests(port: MessagePort) {
  const waiters: ((p: StartPlan | null) => void)[] = []
  return {
    next: () => new Promise<StartPlan | null>((r) => { waiters.push(r); port.postMessage({ type: 'next' } satisfies ThreadMessage) }),
    deliver: (plan: StartPlan | null) => { waiters.shift()?.(plan) },
    end: () => { for (const w of waiters.splice(0)) w(null) },
  }
}

/**
 * The thread's side: a `runStarts` for FitOptions that sends the plans to the parent, fits plans from
 * the shared list itself until none is left, then waits for every outcome.
 */
export function threadRunStarts(
  port: MessagePort, fit: (plan: StartPlan, onProgress?: (info: ProgressInfo) => void) => Promise<StartOutcome>, threadId: number,
  deadline: () => number | null = () => null,
) {
  return async (plans: StartPlan[], onProgress?: (info: ProgressInfo) => void, onStartFinished?: (withEstimate: number, planned: number) => void): Promise<StartOutcome[]> => {
    const requests = planRequests(port)
    let resolveAll!: (o: StartOutcome[]) => void
    const all = new Promise<StartOutcome[]>((r) => { resolveAll = r })
    const onMessage = (m: { type?: string; plan?: StartPlan | null; outcomes?: StartOutcome[]; info?: ProgressInfo; withEstimate?: number; planned?: number }) => {
      if (m?.type === 'plan') requests.deliver(m.plan ?? null)
      if (m?.type === 'progress' && m.info) onProgress?.(m.info)
      if (m?.type === 'finished') onStartFinished?.(m.withEstimate ?? 0, m.planned ?? plans.length)
      if (m?.type === 'outcomes') { requests.end(); resolveAll(m.outcomes ?? []) }
    }
    port.on('message', onMessage)
    try {
      port.postMessage({ type: 'starts', plans, deadline: deadline() } satisfies ThreadMessage)
      await fitSharedPlans(port, requests.next, (plan) => fit(plan, onProgress), threadId)
      return await all
    } finally {
      port.off('message', onMessage)
    }
  }
}

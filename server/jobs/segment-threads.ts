/**
 * Helper threads for multiple shooting: the host side of shared/engine/fit/multiple-shooting/
 * evaluator.ts over node:worker_threads (helper: segment-helper.ts). The threads stay up between the
 * fits of one process or pool thread (booting one loads the engine) and serve one fit at a time: for a
 * fit, each gets the setup and compiles the sheet once; then every evaluation sends each ready helper a
 * block of segments and awaits its rows. A helper that is not up yet takes no block (the fit's thread
 * evaluates it), one that is lost hands its block back, so a fit never waits on a missing thread.
 *
 * Thread count: the threads evaluating segments including the fit's own; 1 = in the fit's thread.
 * Default min(segments, cores − 1) (`defaultSegmentThreads`).
 */
import { Worker } from 'node:worker_threads'
import { availableParallelism } from 'node:os'
import type { SegmentBatch, SegmentEvaluator, SegmentEvaluatorFactory, SegmentRows, SegmentSetup, SegmentShape } from '../../shared/engine/fit'
import { SEGMENT_HELPER, type FromHelper, type ToHelper } from './segment-helper'
import { threadExecArgv } from './thread-argv'

export function defaultSegmentThreads(segments: number, cores = availableParallelism()): number {
  return Math.max(1, Math.min(segments, cores - 1))
}

/** Threads from an option's text (CLI flag or environment variable), or the default when absent. */
export function segmentThreadsOption(text: string | undefined, what: string): number | null {
  if (text === undefined || text === '') return null
  const n = Number(text)
  if (!Number.isInteger(n) || n < 1 || n > 64) throw new Error(`${what}: a whole number from 1 to 64 (got '${text}')`)
  return n
}

/** Where a helper thread starts: our TypeScript under tsx, or (inside the CLI's bundle) the bundle itself. */
function helperEntry(): { url: URL; execArgv: string[] } {
  if (import.meta.url.endsWith('.ts')) return { url: new URL('./segment-helper-boot.cjs', import.meta.url), execArgv: threadExecArgv() }
  return { url: new URL(import.meta.url), execArgv: process.execArgv }
}

interface Pending { resolve: (r: SegmentRows) => void; reject: (e: Error) => void }

class Helper {
  readonly worker: Worker
  up = false
  lost: string | null = null
  /** the fit (setup key) this helper is ready for */
  readyFor = -1
  failed: string | null = null
  private pending = new Map<number, Pending>()
  private onUp: (() => void)[] = []
  onReady: ((key: number) => void) | null = null

  constructor() {
    const { url, execArgv } = helperEntry()
    this.worker = new Worker(url, { workerData: { [SEGMENT_HELPER]: true }, execArgv })
    this.worker.unref()
    this.worker.on('message', (m: FromHelper) => this.message(m))
    this.worker.on('error', (e) => this.lose(e.message))
    this.worker.on('exit', (code) => this.lose(`exited with code ${code}`))
  }

  private message(m: FromHelper) {
    if (m.type === 'up') {
      this.up = true
      for (const f of this.onUp.splice(0)) f()
    } else if (m.type === 'ready') {
      this.readyFor = m.key
      this.failed = null
      this.onReady?.(m.key)
    } else if (m.type === 'failed') {
      this.failed = m.message
      this.onReady?.(m.key)
    } else if (m.type === 'rows') {
      const p = this.pending.get(m.id)
      if (!p) return
      this.pending.delete(m.id)
      if (m.rows) p.resolve(m.rows)
      else p.reject(new Error(m.message ?? 'the helper could not evaluate the block'))
    }
  }

  private lose(why: string) {
    if (this.lost) return
    this.lost = why
    for (const f of this.onUp.splice(0)) f()
    for (const p of this.pending.values()) p.reject(new Error(`segment helper thread lost: ${why}`))
    this.pending.clear()
  }

  whenUp(): Promise<void> {
    return this.up || this.lost ? Promise.resolve() : new Promise((r) => this.onUp.push(r))
  }

  send(m: ToHelper) {
    if (this.lost) return
    if (m.type === 'batch') this.worker.postMessage(m, [m.batch.w.buffer as ArrayBuffer])
    else this.worker.postMessage(m)
  }

  run(key: number, batch: SegmentBatch): Promise<SegmentRows> {
    if (this.lost) return Promise.reject(new Error(`segment helper thread lost: ${this.lost}`))
    return new Promise((resolve, reject) => {
      this.pending.set(batch.id, { resolve, reject })
      this.send({ type: 'batch', key, batch })
    })
  }
}

/** The helper threads of one process (or pool thread), lent to one fit at a time. */
export class SegmentHelpers {
  private helpers: Helper[] = []
  private busy = false
  private nextKey = 1
  /** blocks of segments the helpers evaluated so far (benchmarks and tests) */
  served = 0

  /** Starts threads up to `count` (they load the engine meanwhile). */
  grow(count: number): void {
    this.helpers = this.helpers.filter((h) => !h.lost)
    while (this.helpers.length < count) this.helpers.push(new Helper())
  }

  get size() { return this.helpers.filter((h) => !h.lost).length }

  /** Resolves once every thread has loaded (benchmarks and tests wait for this before timing). */
  async warmUp(count: number): Promise<void> {
    this.grow(count)
    await Promise.all(this.helpers.map((h) => h.whenUp()))
  }

  /**
   * The fit's evaluator factory: `threads` counts the fit's own thread (1 = no helpers; null = the
   * default for the fit's segment count). While another fit holds the helpers, a fit runs in its thread.
   */
  factory(setup: Omit<SegmentSetup, 'deadline'>, threads: number | null): SegmentEvaluatorFactory {
    return (fit) => {
      const n = Math.min(threads ?? defaultSegmentThreads(fit.segments), fit.segments) - 1
      if (n < 1 || this.busy) return null
      this.grow(n)
      this.busy = true
      return new FitLanes(this.helpers.filter((h) => !h.lost).slice(0, n), this.nextKey++, { ...setup, deadline: fit.deadline }, fit.shape, () => { this.busy = false }, () => { this.served++ })
    }
  }

  async close(): Promise<void> {
    await Promise.all(this.helpers.map((h) => h.worker.terminate()))
    this.helpers = []
  }
}

/** One fit's lanes: the helpers that have built this fit's problem. */
class FitLanes implements SegmentEvaluator {
  private lanes: Helper[] = []
  /** why a helper could not serve this fit (first message), for logs and tests */
  problem: string | null = null
  private closed = false
  private refused = new Set<Helper>()

  constructor(
    private helpers: Helper[], private key: number, setup: SegmentSetup, shape: SegmentShape,
    private release: () => void, private onServed: () => void,
  ) {
    for (const h of helpers) {
      h.onReady = (k) => {
        if (k !== key || this.closed) return
        if (h.failed) {
          this.problem ??= h.failed
          this.refused.add(h)
        } else if (h.readyFor === key) this.lanes.push(h)
      }
      h.send({ type: 'setup', key, setup, shape })
    }
  }

  get ready() { return this.lanes.filter((h) => !h.lost).length }

  get starting() { return this.closed ? 0 : this.helpers.filter((h) => !h.lost && !this.lanes.includes(h) && !this.refused.has(h)).length }

  evaluate(lane: number, batch: SegmentBatch): Promise<SegmentRows> {
    const h = this.lanes.filter((x) => !x.lost)[lane]
    if (!h) return Promise.reject(new Error('no such helper lane'))
    return h.run(this.key, batch).then((rows) => { this.onServed(); return rows })
  }

  async close() {
    if (this.closed) return
    this.closed = true
    for (const h of this.helpers) {
      h.onReady = null
      h.send({ type: 'drop', key: this.key })
    }
    this.release()
  }
}

/** This process's (or pool thread's) helpers, started on first use. */
let processHelpers: SegmentHelpers | null = null
export function segmentHelpers(): SegmentHelpers {
  processHelpers ??= new SegmentHelpers()
  return processHelpers
}

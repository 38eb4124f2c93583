/**
 * Helper threads for multiple shooting (shared/engine/fit/multiple-shooting/parallel.ts): each thread
 * holds a copy of the fit's segmented problem, built from the same sheet text, data and options, and
 * takes segments of every evaluation from the shared block until the fit lets it go. The threads stay
 * up between fits (booting one under tsx takes seconds); a thread that is not up yet takes no segment.
 */
import { Piscina } from 'piscina'
import type { FitOptions, ProblemSpec } from '../../shared/engine/fit'
import type { SegmentRequest } from '../../shared/engine/fit/multiple-shooting/segments'
import { threadExecArgv } from './pool'

/** What a helper needs to build the same problem (structured-cloneable). */
export interface SegmentSetup {
  sheet: string
  spec: ProblemSpec
  options: Pick<FitOptions, 'rtol' | 'atol' | 'solver' | 'maxSteps'>
  segments: { segments?: number; segmentLength?: number }
}

export class SegmentThreads {
  private piscina: Piscina
  private lent = 0
  private pending = new Set<Promise<unknown>>()
  /** segments the helpers evaluated so far */
  served = 0

  constructor(readonly count: number) {
    this.piscina = new Piscina({
      filename: new URL('./thread-task.ts', import.meta.url).href,
      minThreads: count, maxThreads: count, idleTimeout: 60_000, execArgv: threadExecArgv(),
    })
  }

  /** The `share` hook of a SegmentRequest for this setup: lends the idle threads for one solve. */
  share(setup: SegmentSetup): NonNullable<SegmentRequest['share']> {
    return (buffer, segments) => {
      const n = Math.max(0, Math.min(this.count - this.lent, segments - 1))
      for (let i = 0; i < n; i++) {
        this.lent++
        const p = (this.piscina.run({ setup, buffer }, { name: 'serveSegmentsTask' }) as Promise<number>)
          .then((k) => { this.served += k }, () => undefined)
          .finally(() => { this.lent--; this.pending.delete(p) })
        this.pending.add(p)
      }
      // the fit's thread closes the block: the helpers' loops end by themselves
      return () => undefined
    }
  }

  /** Resolves once every thread is up (module loading takes seconds under tsx). */
  async warmUp(): Promise<void> {
    const seen = new Set<number>()
    while (seen.size < this.count) {
      const ids = await Promise.all(Array.from({ length: this.count }, () => this.piscina.run(null, { name: 'ping' }) as Promise<number>))
      for (const id of ids) seen.add(id)
    }
  }

  /** Resolves when every lent thread has come back (the fits that used them have ended). */
  async idle(): Promise<void> {
    while (this.pending.size) await Promise.allSettled([...this.pending])
  }

  async close(): Promise<void> {
    await this.idle()
    await this.piscina.destroy()
  }
}

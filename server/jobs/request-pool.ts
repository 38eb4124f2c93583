/**
 * CPU-heavy work on request data (compiling a sheet for a run, reading an uploaded CSV, conditioning a
 * dataset, the hand-over's linear analysis and exports) runs here, on a small pool of worker threads of its own (PEWTER_REQUEST_THREADS, default 1),
 * never on the event loop that answers every other request, and never behind hour-long fits. Each task
 * has a time limit (PEWTER_REQUEST_TIME_LIMIT_SECONDS, counted from when a thread takes it): past it the
 * thread is terminated and the request answers 422 naming the limit. Tasks live in request-tasks.ts and
 * return their outcome as a value (an HttpError crosses the thread boundary as status, code, message).
 */
import { MessageChannel } from 'node:worker_threads'
import { Piscina } from 'piscina'
import { HttpError } from '../errors'
import { errorCodes } from '../../shared/api/errors'
import { threadExecArgv } from './pool'
import type { RequestOutcome } from './request-tasks'

export interface RequestPoolOptions {
  threads: number
  timeLimitMs: number
  /** keep the threads started (servers: a thread takes seconds to load); tests leave it off */
  warm?: boolean
}

const seconds = (ms: number) => (ms >= 1000 ? `${Math.round(ms / 100) / 10} s` : `${ms} ms`)

export class RequestPool {
  private piscina: Piscina | null = null
  private closed = false
  /** tasks a thread is working on now (tests wait for it to send a request while one is in flight) */
  running = 0
  constructor(readonly o: RequestPoolOptions) {
    if (o.warm) void this.pool
  }

  private get pool(): Piscina {
    this.piscina ??= new Piscina({
      // the tasks are re-exported by thread-task.ts, the entry tsx loads in worker threads (see executor.ts)
      filename: new URL('./thread-task.ts', import.meta.url).href,
      maxThreads: this.o.threads,
      minThreads: this.o.warm ? this.o.threads : 0,
      idleTimeout: 60_000,
      execArgv: threadExecArgv(),
    })
    return this.piscina
  }

  /**
   * Runs task `name` of request-tasks.ts; `what` names the work in the time-limit message ("reading
   * trace.csv"). Resolves with its value, or throws the task's HttpError.
   */
  async run<T>(name: string, task: unknown, what: string, transferList?: ArrayBuffer[]): Promise<T> {
    if (this.closed) throw new HttpError(503, errorCodes.unavailable, 'The server is shutting down.')
    const controller = new AbortController()
    let timer: NodeJS.Timeout | undefined
    // the limit counts from when a thread starts the task (the task reports it), not from the wait for one
    const started = (m: unknown) => {
      if ((m as { started?: boolean })?.started && !timer) {
        this.running++
        timer = setTimeout(() => controller.abort(), this.o.timeLimitMs)
      }
    }
    const { port1, port2 } = new MessageChannel()
    port1.on('message', started)
    let outcome: RequestOutcome<T>
    try {
      outcome = await this.pool.run({ ...(task as object), port: port2 }, { name, signal: controller.signal, transferList: [port2, ...(transferList ?? [])] as never }) as RequestOutcome<T>
    } catch (e) {
      if (controller.signal.aborted) {
        throw new HttpError(422, errorCodes.limit, `${what} exceeded the time limit of ${seconds(this.o.timeLimitMs)} for the work of one request (PEWTER_REQUEST_TIME_LIMIT_SECONDS) and was stopped; send less data or fewer steps.`)
      }
      throw e
    } finally {
      if (timer) this.running--
      clearTimeout(timer)
      port1.close()
    }
    if (outcome.ok) return outcome.value
    throw new HttpError(outcome.status, outcome.code, outcome.message, outcome.details)
  }

  async close() {
    this.closed = true
    const p = this.piscina
    this.piscina = null
    await p?.destroy()
  }
}

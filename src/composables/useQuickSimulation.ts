/**
 * The page's side of the quick simulation: a module Web Worker (src/workers/quickSimulation.worker.ts)
 * compiles and integrates, so typing and dragging sliders never block. Only the newest answer of each
 * kind counts; the worker ends with the component. A dataset's record goes to the worker once, its
 * typed arrays transferred (not copied); each simulation on it then sends only the slider values.
 */
import { onBeforeUnmount } from 'vue'
import type { QuickModelInfo, QuickReply, QuickRequest } from '@/workers/quickSimulation'
import { recordBuffers, type QuickRecord, type QuickRecordReply, type QuickRecordRequest } from '@/workers/quickRecordSimulation'
import type { QuickMessageIn } from '@/workers/quickSimulation.worker'

type Answer =
  | { id: number; type: 'compiled'; info: QuickModelInfo }
  | { id: number; type: 'result'; reply: QuickReply }
  | { id: number; type: 'record-held' }
  | { id: number; type: 'record-result'; reply: QuickRecordReply }
  | { id: number; type: 'error'; message: string }

type Message = QuickMessageIn extends infer M ? (M extends { id: number } ? Omit<M, 'id'> : never) : never

export function useQuickSimulation() {
  let worker: Worker | null = null
  let next = 0
  const waiting = new Map<number, (a: Answer) => void>()
  /** the newest request of each kind: an older answer arriving later is dropped */
  let newestCompile = 0
  let newestSimulate = 0

  function ensure(): Worker {
    if (!worker) {
      worker = new Worker(new URL('../workers/quickSimulation.worker.ts', import.meta.url), { type: 'module', name: 'pewter-quick-simulation' })
      worker.addEventListener('message', (e: MessageEvent<Answer>) => {
        const done = waiting.get(e.data.id)
        waiting.delete(e.data.id)
        done?.(e.data)
      })
      worker.addEventListener('error', (e) => {
        for (const [id, done] of waiting) done({ id, type: 'error', message: `The simulation thread failed: ${e.message}` })
        waiting.clear()
      })
    }
    return worker
  }

  function ask(msg: Message, transfer: Transferable[] = []): { id: number; answer: Promise<Answer> } {
    const id = ++next
    const answer = new Promise<Answer>((resolve) => {
      waiting.set(id, resolve)
      ensure().postMessage({ id, ...msg }, { transfer })
    })
    return { id, answer }
  }

  /** The compiled sheet's controls, or the first error; null when a newer compile was asked meanwhile. */
  async function compile(text: string, parts?: Record<string, string>): Promise<{ info: QuickModelInfo } | { message: string } | null> {
    const q = ask({ type: 'compile', text, parts: parts ? { ...parts } : undefined })
    newestCompile = q.id
    const a = await q.answer
    if (a.id !== newestCompile) return null
    if (a.type === 'compiled') return { info: a.info }
    return { message: a.type === 'error' ? a.message : 'unexpected answer' }
  }

  /** One simulation of the compiled sheet; null when a newer one was asked meanwhile. */
  async function run(request: QuickRequest): Promise<QuickReply | null> {
    // a plain copy: reactive proxies cannot cross to the worker
    const q = ask({ type: 'simulate', request: JSON.parse(JSON.stringify(request)) as QuickRequest })
    newestSimulate = q.id
    const a = await q.answer
    if (a.id !== newestSimulate) return null
    if (a.type === 'result') return a.reply
    return { ok: false, message: a.type === 'error' ? a.message : 'unexpected answer' }
  }

  /** Hands a record to the worker; its arrays are transferred, so `record` is unusable afterwards. */
  async function holdRecord(record: QuickRecord): Promise<void> {
    await ask({ type: 'record', record }, recordBuffers(record)).answer
  }

  /** One simulation on the held record; null when a newer simulation of either kind was asked meanwhile. */
  async function runRecord(request: QuickRecordRequest): Promise<QuickRecordReply | null> {
    const q = ask({ type: 'simulate-record', request: JSON.parse(JSON.stringify(request)) as QuickRecordRequest })
    newestSimulate = q.id
    const a = await q.answer
    if (a.id !== newestSimulate) return null
    if (a.type === 'record-result') return a.reply
    return { ok: false, message: a.type === 'error' ? a.message : 'unexpected answer' }
  }

  function stop() {
    worker?.terminate()
    worker = null
    waiting.clear()
  }
  onBeforeUnmount(stop)

  return { compile, run, holdRecord, runRecord, stop }
}

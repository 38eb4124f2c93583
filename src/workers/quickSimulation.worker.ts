/**
 * The quick simulation's thread: holds the compiled sheet and a dataset's record, and answers the page's
 * requests (src/composables/useQuickSimulation.ts). Messages in: { id, type: 'compile', text, parts? } |
 * { id, type: 'simulate', request } | { id, type: 'record', record } (its typed arrays transferred) |
 * { id, type: 'simulate-record', request }; out: { id, type: 'compiled', info } | { id, type: 'result',
 * reply } | { id, type: 'record-held' } | { id, type: 'record-result', reply } (typed arrays transferred)
 * | { id, type: 'error', message }.
 */
import type { CompiledModel } from '@shared/sheet'
import { compileQuick, simulateQuick, type QuickRequest } from './quickSimulation'
import { replyBuffers, simulateRecord, type QuickRecord, type QuickRecordRequest } from './quickRecordSimulation'

export type QuickMessageIn =
  | { id: number; type: 'compile'; text: string; parts?: Record<string, string> }
  | { id: number; type: 'simulate'; request: QuickRequest }
  | { id: number; type: 'record'; record: QuickRecord }
  | { id: number; type: 'simulate-record'; request: QuickRecordRequest }

let compiled: CompiledModel | null = null
let record: QuickRecord | null = null

self.addEventListener('message', (e: MessageEvent<QuickMessageIn>) => {
  const m = e.data
  if (m.type === 'compile') {
    const r = compileQuick(m.text, m.parts)
    compiled = r.compiled
    self.postMessage(r.compiled ? { id: m.id, type: 'compiled', info: r.info } : { id: m.id, type: 'error', message: r.message })
  } else if (m.type === 'record') {
    record = m.record
    self.postMessage({ id: m.id, type: 'record-held' })
  } else if (!compiled) {
    self.postMessage({ id: m.id, type: 'error', message: 'No sheet is compiled yet.' })
  } else if (m.type === 'simulate') {
    self.postMessage({ id: m.id, type: 'result', reply: simulateQuick(compiled, m.request) })
  } else if (!record) {
    self.postMessage({ id: m.id, type: 'error', message: 'No dataset record is loaded yet.' })
  } else {
    const reply = simulateRecord(compiled, record, m.request)
    self.postMessage({ id: m.id, type: 'record-result', reply }, { transfer: replyBuffers(reply) })
  }
})

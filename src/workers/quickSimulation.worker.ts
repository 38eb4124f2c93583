/**
 * The quick simulation's thread: holds the compiled sheet and answers the page's requests
 * (src/composables/useQuickSimulation.ts). Messages in: { id, type: 'compile', text, parts? } |
 * { id, type: 'simulate', request }; out: { id, type: 'compiled', info } | { id, type: 'result', reply } |
 * { id, type: 'error', message }.
 */
import type { CompiledModel } from '@shared/sheet'
import { compileQuick, simulateQuick, type QuickRequest } from './quickSimulation'

export type QuickMessageIn = { id: number; type: 'compile'; text: string; parts?: Record<string, string> } | { id: number; type: 'simulate'; request: QuickRequest }

let compiled: CompiledModel | null = null

self.addEventListener('message', (e: MessageEvent<QuickMessageIn>) => {
  const m = e.data
  if (m.type === 'compile') {
    const r = compileQuick(m.text, m.parts)
    compiled = r.compiled
    self.postMessage(r.compiled ? { id: m.id, type: 'compiled', info: r.info } : { id: m.id, type: 'error', message: r.message })
  } else if (!compiled) {
    self.postMessage({ id: m.id, type: 'error', message: 'No sheet is compiled yet.' })
  } else {
    self.postMessage({ id: m.id, type: 'result', reply: simulateQuick(compiled, m.request) })
  }
})

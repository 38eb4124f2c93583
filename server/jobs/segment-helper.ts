/**
 * A helper thread for multiple shooting (segment-threads.ts starts it): for each fit it receives the
 * setup, compiles the sheet once and builds its copy of the segmented problem, then answers blocks of
 * segments with their residual rows, defects and Jacobian rows (shared/engine/fit/multiple-shooting/
 * evaluator.ts), the arrays transferred. Plain message passing; nothing waits on shared memory.
 *
 * The same module serves from our TypeScript (under tsx) and from inside the command line's bundle,
 * which starts itself as the helper (server/cli/index.ts checks isSegmentHelperThread first).
 */
import { isMainThread, parentPort, workerData } from 'node:worker_threads'
import { compileModel } from '../../shared/sheet'
import { partsResolver } from '../../shared/sheet/parts'
import { SegmentServer, buildSegmentProblem, shapeOf, type SegmentBatch, type SegmentRows, type SegmentSetup, type SegmentShape } from '../../shared/engine/fit'

/** workerData key marking a segment helper */
export const SEGMENT_HELPER = 'pewterSegmentHelper'

export type ToHelper =
  | { type: 'setup'; key: number; setup: SegmentSetup; shape: SegmentShape }
  | { type: 'batch'; key: number; batch: SegmentBatch }
  | { type: 'drop'; key: number }

export type FromHelper =
  | { type: 'up' }
  | { type: 'ready'; key: number }
  | { type: 'failed'; key: number; message: string }
  | { type: 'rows'; key: number; id: number; rows: SegmentRows | null; message?: string }

export function isSegmentHelperThread(): boolean {
  return !isMainThread && (workerData as Record<string, unknown> | null)?.[SEGMENT_HELPER] === true
}

const same = (a: SegmentShape, b: SegmentShape) => a.n === b.n && a.m === b.m && a.segments === b.segments

function serve(): void {
  const port = parentPort!
  let current: { key: number; server: SegmentServer } | null = null
  port.on('message', (m: ToHelper) => {
    if (m.type === 'setup') {
      current = null
      try {
        const model = compileModel(m.setup.sheet, { resolvePart: partsResolver(m.setup.parts) ?? null })
        const ms = buildSegmentProblem(model, m.setup)
        const shape = shapeOf(ms)
        if (!same(shape, m.shape)) throw new Error(`the helper's segmented problem (${shape.n} unknowns, ${shape.m} rows, ${shape.segments} segments) differs from the fit's (${m.shape.n}, ${m.shape.m}, ${m.shape.segments})`)
        current = { key: m.key, server: new SegmentServer(ms) }
        port.postMessage({ type: 'ready', key: m.key } satisfies FromHelper)
      } catch (e) {
        port.postMessage({ type: 'failed', key: m.key, message: e instanceof Error ? e.message : String(e) } satisfies FromHelper)
      }
    } else if (m.type === 'batch') {
      if (!current || current.key !== m.key) {
        port.postMessage({ type: 'rows', key: m.key, id: m.batch.id, rows: null, message: 'no setup for this fit' } satisfies FromHelper)
        return
      }
      let rows: SegmentRows
      try {
        rows = current.server.serve(m.batch)
      } catch (e) {
        port.postMessage({ type: 'rows', key: m.key, id: m.batch.id, rows: null, message: e instanceof Error ? e.message : String(e) } satisfies FromHelper)
        return
      }
      const transfer: ArrayBuffer[] = [rows.r.buffer as ArrayBuffer, rows.defects.buffer as ArrayBuffer]
      if (rows.jac) transfer.push(rows.jac.buffer as ArrayBuffer)
      port.postMessage({ type: 'rows', key: m.key, id: m.batch.id, rows } satisfies FromHelper, transfer)
    } else if (m.type === 'drop') {
      if (current?.key === m.key) current = null
    }
  })
  port.postMessage({ type: 'up' } satisfies FromHelper)
}

if (isSegmentHelperThread()) serve()

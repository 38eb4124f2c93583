/**
 * Line diffs of sheet texts and parameter changes between two sheet summaries.
 *
 * The line diff is the greedy forward algorithm of E. W. Myers, "An O(ND) difference algorithm and
 * its variations", Algorithmica 1 (1986) 251-266, section 3 (furthest-reaching D-paths on diagonals
 * k = x - y), with the trace of each round kept to walk the edit script back. It yields a shortest
 * edit script; deletions are listed before insertions within a changed block.
 */
import type { DiffLine, ParameterChange, SheetSummary, SummaryParameter } from '../../shared/api/models'

/** Beyond this many edits the diff gives up on finding a shortest script and replaces the whole text. */
const MAX_EDITS = 4000

export function splitLines(text: string): string[] {
  if (text === '') return []
  const lines = text.replace(/\r\n?/g, '\n').split('\n')
  if (lines[lines.length - 1] === '') lines.pop()
  return lines
}

export function diffLines(oldText: string, newText: string): { lines: DiffLine[]; added: number; removed: number } {
  const a = splitLines(oldText)
  const b = splitLines(newText)
  const ops = editScript(a, b)
  const lines: DiffLine[] = []
  let added = 0
  let removed = 0
  for (const op of ops) {
    if (op.kind === 'same') lines.push({ kind: 'same', text: a[op.i], oldLine: op.i + 1, newLine: op.j + 1 })
    else if (op.kind === 'removed') { lines.push({ kind: 'removed', text: a[op.i], oldLine: op.i + 1, newLine: null }); removed++ }
    else { lines.push({ kind: 'added', text: b[op.j], oldLine: null, newLine: op.j + 1 }); added++ }
  }
  return { lines, added, removed }
}

type Op = { kind: 'same' | 'removed' | 'added'; i: number; j: number }

function editScript(a: string[], b: string[]): Op[] {
  const n = a.length
  const m = b.length
  const max = n + m
  const offset = max + 1
  const v = new Int32Array(2 * max + 3)
  const trace: Int32Array[] = []
  let found = -1
  for (let d = 0; d <= Math.min(max, MAX_EDITS); d++) {
    trace.push(v.slice(offset - d - 1, offset + d + 2))
    for (let k = -d; k <= d; k += 2) {
      let x = k === -d || (k !== d && v[offset + k - 1] < v[offset + k + 1]) ? v[offset + k + 1] : v[offset + k - 1] + 1
      let y = x - k
      while (x < n && y < m && a[x] === b[y]) { x++; y++ }
      v[offset + k] = x
      if (x >= n && y >= m) { found = d; break }
    }
    if (found >= 0) break
  }
  if (found < 0) {
    const ops: Op[] = []
    for (let i = 0; i < n; i++) ops.push({ kind: 'removed', i, j: -1 })
    for (let j = 0; j < m; j++) ops.push({ kind: 'added', i: -1, j })
    return ops
  }
  // walk back: trace[d] holds V as it was before round d, for diagonals -d-1 … d+1
  const ops: Op[] = []
  let x = n
  let y = m
  for (let d = found; d >= 0; d--) {
    const vd = trace[d]
    const at = (k: number) => vd[k + d + 1]
    const k = x - y
    let prevK: number
    if (d === 0) prevK = 0
    else prevK = k === -d || (k !== d && at(k - 1) < at(k + 1)) ? k + 1 : k - 1
    const prevX = d === 0 ? 0 : at(prevK)
    const prevY = prevX - prevK
    while (x > prevX && y > prevY) { x--; y--; ops.push({ kind: 'same', i: x, j: y }) }
    if (d > 0) {
      if (x === prevX) ops.push({ kind: 'added', i: -1, j: prevY })
      else ops.push({ kind: 'removed', i: prevX, j: -1 })
    }
    x = prevX
    y = prevY
  }
  ops.reverse()
  return groupChanges(ops)
}

/** Within each run of changes, list the removed lines before the added ones (reads like a patch). */
function groupChanges(ops: Op[]): Op[] {
  const out: Op[] = []
  let rem: Op[] = []
  let add: Op[] = []
  const flush = () => { out.push(...rem, ...add); rem = []; add = [] }
  for (const op of ops) {
    if (op.kind === 'same') { flush(); out.push(op) } else if (op.kind === 'removed') rem.push(op)
    else add.push(op)
  }
  flush()
  return out
}

// ── parameters ──────────────────────────────────────────────────────────────────────────────────
const same = (x: unknown, y: unknown) => (x ?? null) === (y ?? null)

/** Parameters added, removed, or changed in value, bounds, unit or fixed/free, by name. */
export function diffParameters(before: SheetSummary | null, after: SheetSummary | null): ParameterChange[] {
  const oldP = new Map<string, SummaryParameter>((before?.parameters ?? []).map((p) => [p.name, p]))
  const newP = new Map<string, SummaryParameter>((after?.parameters ?? []).map((p) => [p.name, p]))
  const changes: ParameterChange[] = []
  for (const [name, p] of oldP) {
    const q = newP.get(name)
    if (!q) { changes.push({ name, change: 'removed', fields: [], before: p, after: null }); continue }
    const fields: ParameterChange['fields'] = []
    if (!same(p.value, q.value)) fields.push('value')
    if (!same(p.lower, q.lower) || !same(p.upper, q.upper)) fields.push('bounds')
    if (!same(p.unit ?? '', q.unit ?? '')) fields.push('unit')
    if (!same(p.fixed, q.fixed)) fields.push('fixed')
    if (fields.length) changes.push({ name, change: 'changed', fields, before: p, after: q })
  }
  for (const [name, q] of newP) if (!oldP.has(name)) changes.push({ name, change: 'added', fields: [], before: null, after: q })
  return changes
}

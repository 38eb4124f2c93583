/**
 * Events and modes of a sheet (switched plants):
 *
 *   mode  heater = off                                   "heater contactor"
 *   event T falls below T_lo then heater = on
 *   event T rises above T_hi then heater = off
 *   event y falls below 0 then v = -e_r * v              "floor contact"
 *
 * A mode is a switch position the equations read as a number (off/closed 0, on/open 1, or a whole
 * number); only events change it. An event fires where its condition A − B crosses zero in its
 * direction (`falls below`: from above to at or below, `rises above`: from below to at or above,
 * `crosses`: either way); its assignments all read the values just before the event (states and
 * modes), then write states and modes at once. The engine locates the crossing on the solver's dense
 * output (shared/engine/events.ts).
 *
 * This module reads the two line kinds and resolves them once the names of the sheet are known.
 */
import { type Expr, walk } from './ast'
import type { DiagnosticList, Span } from './diagnostics'
import { didYouMean } from '../did-you-mean'
import { LineScanner, type RawExpr, type Tok } from './line-scanner'
import type { EventDecl, ModeDecl, ResetDecl, StateDecl } from './model'

/** position words of a mode and their numbers */
export const POSITIONS: Readonly<Record<string, number>> = { off: 0, on: 1, closed: 0, open: 1 }
const POSITION_HINT = 'off, on, closed, open or a whole number'
const DIRECTION_RE = /\b(falls\s+below|rises\s+above|crosses)\b/g

export interface RawReset { name: Tok; raw: RawExpr }
export interface RawEvent {
  span: Span
  direction: 'up' | 'down' | 'either'
  lhs: RawExpr
  rhs: RawExpr
  text: string
  description: string
  resets: RawReset[]
}

/** a position word or whole number, or null */
export function positionValue(text: string): number | null {
  const t = text.trim()
  if (t in POSITIONS) return POSITIONS[t]
  if (/^[+-]?\d+$/.test(t)) return Number(t)
  return null
}

/** `mode NAME = POSITION "…"` after the name. */
export function readModeLine(s: LineScanner, name: Tok, d: DiagnosticList): ModeDecl | null {
  if (!s.eat('=')) { d.error(s.atEnd() ? name.span : s.restSpan(), `missing position: write mode ${name.text} = off (${POSITION_HINT})`); return null }
  s.skipWs()
  const start = s.pos
  while (s.pos < s.text.length && !/[\s"]/.test(s.text[s.pos])) s.pos++
  const word = s.text.slice(start, s.pos)
  const span = s.span(start, s.pos)
  const v = positionValue(word)
  if (v === null) { d.error(span, `a mode starts at a position: ${POSITION_HINT}; found '${word.slice(0, 40)}'${didYouMean(word, Object.keys(POSITIONS))}`); return null }
  let description = ''
  const str = s.string()
  if (str === 'unclosed') { d.error(s.restSpan(), 'the description has no closing "'); return null }
  if (str) description = str.text
  if (!s.atEnd()) { const w = s.word(); d.error(w.span, `unexpected '${w.text.slice(0, 40)}' after the mode's position`); return null }
  return { name: name.text, description, unit: null, span: name.span, initial: v }
}

/** the depth-0 positions of `ch` in text (outside ( ) and [ ]) */
function topLevel(text: string, at: (i: number) => boolean): number[] {
  const out: number[] = []
  let depth = 0
  for (let i = 0; i < text.length; i++) {
    const c = text[i]
    if (c === '(' || c === '[') depth++
    else if (c === ')' || c === ']') depth--
    else if (depth === 0 && at(i)) out.push(i)
  }
  return out
}

function depthAt(text: string, at: number): number {
  let depth = 0
  for (let i = 0; i < at; i++) {
    const c = text[i]
    if (c === '(' || c === '[') depth++
    else if (c === ')' || c === ']') depth--
  }
  return depth
}

function raw(text: string, line: number, from: number, to: number): RawExpr {
  const slice = text.slice(from, to)
  const lead = slice.length - slice.trimStart().length
  return { text: slice.trim(), line, col0: from + lead + 1 }
}

/** `event A falls below B then x = …, m = on "…"` after the keyword. */
export function readEventLine(s: LineScanner, head: Tok, d: DiagnosticList, readName: (s: LineScanner) => Tok | null): RawEvent | null {
  const example = 'event T falls below T_lo then heater = on'
  const text = s.text
  const line = s.line
  let end = text.length
  let description = ''
  const desc = /"([^"]*)"\s*$/.exec(text.slice(s.pos))
  if (desc) { end = s.pos + desc.index; description = desc[1] }
  const body = text.slice(0, end)
  const thenAt = topLevel(body, (i) => i >= s.pos && /^then\b/.test(body.slice(i)) && !/[A-Za-z0-9_.]/.test(body[i - 1] ?? ' '))
  if (thenAt.length === 0) { d.error(s.restSpan(), `an event says what happens after then: ${example}`); return null }
  const th = thenAt[0]
  const condText = body.slice(s.pos, th)
  DIRECTION_RE.lastIndex = 0
  let m: RegExpExecArray | null = null
  for (let r = DIRECTION_RE.exec(condText); r !== null; r = DIRECTION_RE.exec(condText)) {
    if (depthAt(condText, r.index) === 0) { m = r; break }
  }
  const condSpan = s.span(s.pos, th)
  if (!m) { d.error(condSpan, `an event condition says how it crosses: A falls below B, A rises above B or A crosses B (${example})`); return null }
  const opAt = s.pos + m.index
  const lhs = raw(text, line, s.pos, opAt)
  const rhs = raw(text, line, opAt + m[0].length, th)
  if (lhs.text === '') { d.error(condSpan, `missing the quantity before '${m[1].replace(/\s+/g, ' ')}': ${example}`); return null }
  if (rhs.text === '') { d.error(condSpan, `missing the threshold after '${m[1].replace(/\s+/g, ' ')}': ${example}`); return null }
  const direction = m[1].startsWith('falls') ? 'down' : m[1].startsWith('rises') ? 'up' : 'either'

  const resets: RawReset[] = []
  const from = th + 4
  const commas = topLevel(body.slice(from), (i) => body[from + i] === ',').map((i) => from + i)
  const cuts = [from, ...commas.map((c) => c + 1)]
  const ends = [...commas, end]
  for (let k = 0; k < cuts.length; k++) {
    const seg = body.slice(cuts[k], ends[k])
    const segSpan = s.span(cuts[k] + (seg.length - seg.trimStart().length), Math.max(cuts[k] + 1, ends[k]))
    if (seg.trim() === '') { d.error(segSpan, `expected an assignment NAME = value after ${k === 0 ? 'then' : "','"}`); return null }
    const sub = new LineScanner(text.slice(0, ends[k]), line)
    sub.pos = cuts[k]
    const name = readName(sub)
    if (!name) { d.error(segSpan, `expected an assignment NAME = value, found '${seg.trim().slice(0, 40)}'`); return null }
    let target = name
    if (sub.text[sub.pos] === '[') {
      const close = sub.text.indexOf(']', sub.pos)
      if (close < 0) { d.error(segSpan, `the index of ${name.text} has no closing ']'`); return null }
      target = { text: `${name.text}[${sub.text.slice(sub.pos + 1, close).trim()}]`, span: sub.span(name.span.column - 1, close + 1) }
      sub.pos = close + 1
    }
    if (!sub.eat('=') || sub.text[sub.pos] === '=') { d.error(segSpan, `expected an assignment ${target.text} = value`); return null }
    resets.push({ name: target, raw: raw(text, line, sub.pos, ends[k]) })
  }
  return { span: head.span, direction, lhs, rhs, text: condText.trim(), description, resets }
}

export interface EventContext {
  diags: DiagnosticList
  discrete: boolean
  lookup(name: string): { kind: string; index: number; span: Span } | null
  states: StateDecl[]
  modes: ModeDecl[]
  build(raw: RawExpr): Expr | null
  unknown(name: string): string
}

/** Resolve the events' names; null when one could not be built (its problems are reported). */
export function buildEvents(raws: RawEvent[], ctx: EventContext): EventDecl[] | null {
  const d = ctx.diags
  const out: EventDecl[] = []
  const setModes = new Set<number>()
  let broken = false
  for (const r of raws) {
    if (ctx.discrete) {
      d.error(r.span, 'events need a continuous-time sheet: a discrete sheet writes its switching in the next-equations (cond ? a : b)')
      continue
    }
    const lhs = ctx.build(r.lhs)
    const rhs = ctx.build(r.rhs)
    if (!lhs || !rhs) { broken = true; continue }
    let moves = false
    for (const e of [lhs, rhs]) walk(e, (n) => { if (n.k === 'x' || n.k === 'u' || n.k === 't' || n.k === 'delay' || n.k === 'let') moves = true })
    if (!moves) {
      d.error({ line: r.lhs.line, column: r.lhs.col0, endColumn: r.rhs.col0 + Math.max(1, r.rhs.text.length) }, `the condition '${r.text}' depends on no state, input or t: it can never cross`)
      continue
    }
    const resets: ResetDecl[] = []
    const seen = new Set<string>()
    for (const a of r.resets) {
      const nm = a.name.text
      if (seen.has(nm)) { d.error(a.name.span, `${nm} is assigned twice in one event`); continue }
      seen.add(nm)
      const ent = ctx.lookup(nm)
      if (!ent) { d.error(a.name.span, ctx.unknown(nm)); continue }
      const at: Span = { line: r.span.line, column: a.name.span.column, endColumn: a.raw.col0 + Math.max(1, a.raw.text.length) }
      if (ent.kind === 'state') {
        const e = ctx.build(a.raw)
        if (!e) { broken = true; continue }
        resets.push({ target: 'state', index: ent.index, expr: e, text: a.raw.text, span: at })
      } else if (ent.kind === 'mode') {
        const v = positionValue(a.raw.text)
        if (v === null) {
          d.error({ line: a.raw.line, column: a.raw.col0, endColumn: a.raw.col0 + Math.max(1, a.raw.text.length) }, `mode ${nm} takes a position: ${POSITION_HINT}; found '${a.raw.text.slice(0, 40)}'`)
          continue
        }
        setModes.add(ent.index)
        resets.push({ target: 'mode', index: ent.index, value: v, span: at })
      } else {
        d.error(a.name.span, `an event assigns states and modes only: '${nm}' is a ${ent.kind}`)
      }
    }
    out.push({ lhs, rhs, direction: r.direction, text: r.text, description: r.description, span: r.span, resets })
  }
  ctx.modes.forEach((m, i) => {
    if (!setModes.has(i)) d.warning(m.span, `mode ${m.name} never changes: no event sets it (write event … then ${m.name} = on)`)
  })
  return broken ? null : out
}

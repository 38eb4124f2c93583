/**
 * The sheet parser: reads the declarations line by line, then builds every expression with the
 * names resolved (expression.ts), orders the lets, and runs the unit check (unit-check.ts).
 * Never throws: every problem becomes a diagnostic at its place.
 */
import { type Cols, type Expr, FUNCTIONS, walk } from './ast'
import type { DelayInfo, TimeUnit } from './compiled'
import { type Diagnostic, type DiagnosticFix, DiagnosticList, replaceFix, type Span } from './diagnostics'
import { buildExpr, type ExprContext } from './expression'
import { hashText } from './hash'
import { type DerivativeHead, derivativeHead, derivativeName, olderFormMessage } from './leibniz'
import { LineScanner, NUMBER_RE, type RawExpr, stripComment, type Tok } from './line-scanner'
import type { ConstDecl, EquationDecl, InputDecl, LetDecl, LookupDecl, ModeDecl, OutputDecl, ParamDecl, ParsedModel, StateDecl } from './model'
import { closest, didYouMean } from '../did-you-mean'
import { checkUnits } from './unit-check'
import { checkComparisons } from './comparison-check'
import { buildEvents, type RawEvent, readEventLine, readModeLine } from './events'
import { parseUnit, SECONDS_PER, sameDims, TIME_DIMS, type UnitInfo } from './units'
import { plainPowerForm, sheetUnitNames, unknownUnitProblem } from './unit-suggest'

export const MAX_SHEET_CHARS = 2_000_000
export const MAX_LINE_CHARS = 10_000
export const MAX_DIAGNOSTICS = 200

export const KEYWORDS = ['model', 'time', 'sample', 'input', 'param', 'const', 'lookup', 'state', 'let', 'next', 'output', 'part', 'feed', 'mode', 'event'] as const
/** words of an event line: `event A falls below B then x = …` (see events.ts) */
export const EVENT_WORDS = ['falls', 'rises', 'crosses', 'then'] as const
/** reductions over an index range: sum(i in 1..N, …), prod(i in 1..N, …) */
export const REDUCERS = ['sum', 'prod'] as const
/** the most names one indexed declaration may expand to */
export const MAX_RANGE = 10_000
const MODIFIERS = ['in', 'fixed', 'estimate', 'steady', 'linear', 'hold', 'sigma']
/** words that mathjs's parser reads as operators or constants, and JavaScript's object internals */
const HOST_WORDS = ['mod', 'to', 'and', 'or', 'not', 'xor', 'true', 'false', 'null', 'undefined', 'Infinity', 'NaN', 'end', 'constructor', 'prototype', '__proto__']
export const RESERVED = new Set<string>([...KEYWORDS, ...MODIFIERS, ...FUNCTIONS, ...REDUCERS, ...EVENT_WORDS, ...HOST_WORDS, 'delay', 't', 'pi', 'e'])

/**
 * The position of the first `[` at or after `from` that opens a unit: one that does not follow a
 * name or `]` directly (those open an index, `T[i-1]`); -1 when there is none.
 */
function unitBracket(t: string, from: number): number {
  for (let j = from; j < t.length; j++) {
    if (t[j] !== '[') continue
    if (j > 0 && /[A-Za-z0-9_\]]/.test(t[j - 1])) {
      const close = t.indexOf(']', j)
      if (close < 0) return -1
      j = close
      continue
    }
    return j
  }
  return -1
}

type Kind = 'state' | 'param' | 'const' | 'input' | 'lookup' | 'let' | 'mode'
interface Entry { kind: Kind; index: number; span: Span }

export type { RawExpr }
/** an index range written after a name: `[lo..hi]`, `[i in lo..hi]` or a single index `[k]` */
interface Range { v: string | null; lo: number; hi: number; single: boolean; span: Span }
/** the value of the index variable while an expression of a ranged statement is built */
interface IndexEnv { v: string; k: number }
interface RawLet { decl: Omit<LetDecl, 'expr'>; raw: RawExpr; env: IndexEnv | null }
interface RawEq { name: string; span: Span; form: 'derivative' | 'next'; raw: RawExpr; env: IndexEnv | null }
interface RawOut { decl: Omit<OutputDecl, 'expr'>; raw: RawExpr }

export interface ParseResult {
  model: ParsedModel | null
  diagnostics: Diagnostic[]
}

export interface ParseOptions {
  /** accept qualified names `part.name` (the flat text of a sheet with parts, see parts.ts) */
  qualified?: boolean
}

export function parseSheet(text: unknown, opts: ParseOptions = {}): ParseResult {
  const p = new SheetParser(opts.qualified === true)
  try {
    return p.run(text)
  } catch (e) {
    // a bug of ours must not reach the caller as an exception
    const d = p.diags
    d.error({ line: 1, column: 1, endColumn: 2 }, `internal error while reading the sheet: ${e instanceof Error ? e.message : String(e)}`)
    return { model: null, diagnostics: d.sorted() }
  }
}

class SheetParser {
  constructor(private readonly qualified: boolean) {}
  diags = new DiagnosticList()
  private names = new Map<string, Entry>()
  private title = ''
  private titleSeen: Span | null = null
  private timeUnit: TimeUnit = 's'
  private timeSeen: Span | null = null
  private sample: { value: number; unit: string; span: Span } | null = null
  private states: StateDecl[] = []
  private params: ParamDecl[] = []
  private consts: ConstDecl[] = []
  private inputs: InputDecl[] = []
  private lookups: LookupDecl[] = []
  private lets: RawLet[] = []
  private eqs: RawEq[] = []
  private outs: RawOut[] = []
  private modes: ModeDecl[] = []
  private rawEvents: RawEvent[] = []
  private statements = 0
  private delays: DelayInfo[] = []
  private delayKeys = new Map<string, number>()
  /** indexed declarations: base name → its range and kind */
  private ranges = new Map<string, { lo: number; hi: number; kind: Kind; span: Span }>()
  /** index variables bound while an expression is built (innermost last) */
  private indexEnv: IndexEnv[] = []

  private text = ''

  run(text: unknown): ParseResult {
    const d = this.diags
    const first = { line: 1, column: 1, endColumn: 2 }
    if (typeof text !== 'string') {
      d.error(first, 'the sheet must be text')
      return { model: null, diagnostics: d.sorted() }
    }
    if (text.length > MAX_SHEET_CHARS) {
      d.error(first, `the sheet is too large (${text.length} characters, at most ${MAX_SHEET_CHARS})`)
      return { model: null, diagnostics: d.sorted() }
    }
    this.text = text
    const lines = text.split(/\r\n|\n|\r/)
    for (let i = 0; i < lines.length; i++) {
      if (d.items.length >= MAX_DIAGNOSTICS) break
      i = this.line(lines, i)
    }
    if (d.items.length >= MAX_DIAGNOSTICS) {
      const out = d.sorted().slice(0, MAX_DIAGNOSTICS)
      out.push({ line: out[out.length - 1].line, column: 1, endColumn: 2, severity: 'error', message: `too many problems: stopped after ${MAX_DIAGNOSTICS}` })
      return { model: null, diagnostics: out }
    }
    if (this.statements === 0) {
      d.error(first, 'empty sheet: declare at least one state and its equation (see the template library)')
      return { model: null, diagnostics: d.sorted() }
    }
    const model = this.finish(text)
    return { model: d.hasErrors ? null : model, diagnostics: d.sorted() }
  }

  // ---------------------------------------------------------------- lines
  /**
   * reads the statement starting at lines[i]; returns the index of its last line. `asKeyword`:
   * read the line as if it started with that keyword (after a misspelt one).
   */
  private line(lines: string[], i: number, asKeyword?: string): number {
    const raw = lines[i]
    const lineNo = i + 1
    const d = this.diags
    if (raw.length > MAX_LINE_CHARS) {
      d.error({ line: lineNo, column: 1, endColumn: 2 }, `line is too long (${raw.length} characters, at most ${MAX_LINE_CHARS})`)
      return i
    }
    const code = stripComment(raw)
    for (let c = 0; c < code.length; c++) {
      const cc = code.charCodeAt(c)
      if ((cc < 32 && cc !== 9) || cc === 127 || cc === 0xfffd) {
        d.error({ line: lineNo, column: c + 1, endColumn: c + 2 }, `unexpected control or binary character (code ${cc})`)
        return i
      }
    }
    const s = new LineScanner(code, lineNo)
    if (s.atEnd()) return i
    this.statements++
    const dh = derivativeHead(code)
    if (dh) { this.derivativeLine(s, dh); return i }
    const head = this.name(s)
    if (!head) {
      const w = s.word()
      d.error(w.span, `a line must start with a keyword (${KEYWORDS.join(', ')}) or an equation dx/dt = …; found '${w.text.slice(0, 40)}'`)
      return i
    }
    switch (asKeyword ?? head.text) {
      case 'model': this.model(s, head); return i
      case 'time': this.time(s, head); return i
      case 'sample': this.sampleLine(s, head); return i
      case 'input': case 'param': case 'const': case 'state': this.declaration(s, asKeyword ?? head.text); return i
      case 'lookup': return this.lookup(s, lines, i)
      case 'let': this.letLine(s); return i
      case 'next': {
        const name = this.name(s)
        if (!name) { d.error(s.here(), 'expected a state name after next'); return i }
        let r: Range | null | false = null
        if (s.text[s.pos] === '[') { r = this.rangeAfter(s, name.text); if (!r) return i }
        this.equation(s, name, 'next', r ?? undefined)
        return i
      }
      case 'output': this.output(s); return i
      case 'mode': {
        const name = this.declareName(s, 'mode')
        if (!name) return i
        const decl = readModeLine(s, name, d)
        if (decl) { this.register(name, 'mode', this.modes.length); this.modes.push(decl) }
        return i
      }
      case 'event': {
        const ev = readEventLine(s, head, d, (sc) => this.name(sc))
        if (ev) this.rawEvents.push(ev)
        return i
      }
      case 'part': case 'feed':
        d.error(head.span, `${head.text} lines need the model library: check the sheet where its parts can be found (the editor, or the command line with --library DIR)`)
        return i
      default: {
        if (s.peek() === '=') {
          d.error(head.span, `unknown statement: to define '${head.text}' write let ${head.text} = …, or ${derivativeName(head.text)} = … for a state's derivative`, replaceFix(head.span, `let ${head.text}`, `Make it let ${head.text} = …`))
          return i
        }
        if (s.peek() === '/' && head.text.length > 1 && head.text.startsWith('d')) {
          d.error(s.span(head.span.column - 1, s.text.indexOf('=') > 0 ? s.text.indexOf('=') : s.text.length), `a derivative is taken with respect to the time t: write ${derivativeName(head.text.slice(1))} = …`)
          return i
        }
        const kw = asKeyword ? null : closest(head.text, KEYWORDS)
        if (!kw) {
          d.error(head.span, `unknown keyword '${head.text}'; a line starts with ${KEYWORDS.join(', ')} or is an equation dx/dt = …`)
          return i
        }
        d.error(head.span, `unknown keyword '${head.text}'; did you mean '${kw}'?`, replaceFix(head.span, kw))
        return this.readAsKeyword(lines, i, kw)
      }
    }
  }

  /**
   * After a misspelt keyword: read the line as the keyword meant, so what it declares counts as
   * declared, keeping its own problems back (the misspelling is the one reported at that line).
   */
  private readAsKeyword(lines: string[], i: number, kw: string): number {
    const real = this.diags
    this.diags = new DiagnosticList()
    try {
      return this.line(lines, i, kw)
    } finally {
      this.diags = real
    }
  }

  private trailing(s: LineScanner, what: string): void {
    if (!s.atEnd()) {
      const w = s.word()
      this.diags.error(w.span, `unexpected '${w.text.slice(0, 40)}' after ${what}`)
    }
  }

  private model(s: LineScanner, head: Tok): void {
    const str = s.string()
    if (str === 'unclosed') { this.diags.error(s.restSpan(), 'the title has no closing "'); return }
    if (!str) { this.diags.error(s.restSpan(), 'expected the title in quotes: model "…"'); return }
    if (this.titleSeen) this.diags.warning(head.span, `second model line (the first is at line ${this.titleSeen.line}); this title wins`)
    this.titleSeen = head.span
    this.title = str.text
    this.trailing(s, 'the title')
  }

  private time(s: LineScanner, head: Tok): void {
    const b = s.bracket()
    if (b === 'unclosed') { this.diags.error(s.restSpan(), "unit has no closing ']'"); return }
    if (!b) { this.diags.error(s.restSpan(), 'expected the time unit: time [s], time [min] or time [h]'); return }
    const u = b.inner.trim()
    if (u !== 's' && u !== 'min' && u !== 'h') {
      this.diags.error(b.tok.span, `the time unit must be s, min or h, not '${u}'`)
      return
    }
    if (this.timeSeen) this.diags.error(head.span, `second time line (the first is at line ${this.timeSeen.line})`)
    this.timeSeen = head.span
    this.timeUnit = u
    this.trailing(s, 'the time unit')
  }

  private sampleLine(s: LineScanner, head: Tok): void {
    const v = this.number(s, 'sample time', 'sample 1 [s]')
    if (v === null) return
    if (!(v.value > 0)) { this.diags.error(v.span, 'the sample time must be positive'); return }
    let unit = ''
    const b = s.bracket()
    if (b === 'unclosed') { this.diags.error(s.restSpan(), "unit has no closing ']'"); return }
    if (b) {
      unit = b.inner.trim()
      if (unit !== 's' && unit !== 'min' && unit !== 'h') { this.diags.error(b.tok.span, `the sample time unit must be s, min or h, not '${unit}'`); return }
    }
    if (this.sample) this.diags.error(head.span, `second sample line (the first is at line ${this.sample.span.line})`)
    this.sample = { value: v.value, unit, span: head.span }
    this.trailing(s, 'the sample time')
  }

  /** a number token; reports missing/malformed and returns null */
  private number(s: LineScanner, what: string, example: string, allowInf = false): { value: number; span: Span } | null {
    const t = s.numberish()
    if (!t) {
      const here = s.atEnd() ? s.here() : s.word().span
      this.diags.error(here, `missing value: expected the ${what} as a number (${example})`)
      return null
    }
    return this.checkNumber(t, what, allowInf)
  }
  private checkNumber(t: Tok, what: string, allowInf: boolean): { value: number; span: Span } | null {
    const txt = t.text.trim()
    if (allowInf && /^[+-]?inf$/.test(txt)) return { value: txt.startsWith('-') ? -Infinity : Infinity, span: t.span }
    if (!NUMBER_RE.test(txt)) {
      this.diags.error(t.span, `malformed number '${txt.slice(0, 40)}' for the ${what}`)
      return null
    }
    const v = Number(txt)
    if (!Number.isFinite(v)) { this.diags.error(t.span, `the ${what} ${txt.slice(0, 40)} is out of range`); return null }
    return { value: v, span: t.span }
  }

  private unitAt(b: { tok: Tok; inner: string; innerCol: number }): UnitInfo | false {
    const text = b.inner.trim()
    const r = parseUnit(text)
    const lead = b.inner.length - b.inner.trimStart().length
    const inner = { line: b.tok.span.line, column: b.innerCol + lead, endColumn: b.innerCol + lead + Math.max(1, text.length) }
    if (!r.ok) {
      const p = unknownUnitProblem(text, r.message, r.unknown, this.sheetUnits())
      this.diags.error(b.tok.span, p.message, p.replacement === null ? null : replaceFix(inner, p.replacement))
      return false
    }
    const plain = plainPowerForm(text)
    if (plain) this.diags.warning(b.tok.span, `unit '${text}': write powers with ^; did you mean '${plain}'?`, replaceFix(inner, plain))
    return r.unit
  }

  private ownUnits: string[] | null = null
  /** the unit names the sheet's own `[…]` texts use, for spelling help */
  private sheetUnits(): string[] {
    this.ownUnits ??= sheetUnitNames([...this.text.matchAll(/\[([^[\]\n,]{1,80})\]/g)].slice(0, 2000).map((m) => m[1].trim()))
    return this.ownUnits
  }

  /** an optional `[unit]` here: null when there is none, false after reporting an error */
  private optionalUnit(s: LineScanner): UnitInfo | null | false {
    const b = s.bracket()
    if (b === 'unclosed') { this.diags.error(s.restSpan(), "unit has no closing ']'"); return false }
    return b ? this.unitAt(b) : null
  }

  /** a name; `part.name` (several levels) in the flat text of a sheet with parts */
  private name(s: LineScanner): Tok | null {
    const t = s.ident()
    if (t && !this.qualified && s.text[s.pos] === '.' && /[A-Za-z_]/.test(s.text[s.pos + 1] ?? '')) {
      this.diags.error(s.span(t.span.column - 1, s.text.length), `qualified names belong to parts: there is no part named '${t.text}' (declare part ${t.text} = HANDLE@VERSION)`)
      s.pos = s.text.length
      return null
    }
    if (!t || !this.qualified) return t
    let end = s.pos
    while (s.text[end] === '.' && /[A-Za-z_]/.test(s.text[end + 1] ?? '')) {
      end++
      while (/[A-Za-z0-9_]/.test(s.text[end] ?? '')) end++
    }
    if (end === s.pos) return t
    const start = t.span.column - 1
    s.pos = end
    return { text: s.text.slice(start, end), span: s.span(start, end) }
  }

  private declareName(s: LineScanner, kind: Kind): Tok | null {
    const name = this.name(s)
    if (!name) {
      const w = s.atEnd() ? s.here() : s.word().span
      this.diags.error(w, `expected a name after ${kind}`)
      return null
    }
    if (RESERVED.has(name.text)) {
      this.diags.error(name.span, `'${name.text}' is a reserved word and cannot be used as a name`)
      return null
    }
    const prev = this.names.get(name.text)
    if (prev) {
      this.diags.error(name.span, `duplicate name '${name.text}': already declared as a ${prev.kind} at line ${prev.span.line}`)
      return null
    }
    return name
  }

  private register(name: Tok, kind: Kind, index: number): void {
    this.names.set(name.text, { kind, index, span: name.span })
  }

  private declaration(s: LineScanner, kw: string): void {
    const kind = kw as Kind
    const d = this.diags
    const name = this.declareName(s, kind)
    if (!name) return
    let range: Range | null | false = null
    if (s.text[s.pos] === '[') {
      range = this.rangeAfter(s, name.text)
      if (!range) return
      if (range.single) { d.error(range.span, `an indexed ${kw} needs a range: ${kw} ${name.text}[1..N] = …`); return }
    }
    const example = `${kw} ${name.text} = 1 [unit]`
    if (!s.eat('=')) {
      const at = s.atEnd() ? s.here() : s.word().span
      d.error(at, `missing value: write ${example}`)
      return
    }
    const v = this.number(s, `value of ${name.text}`, example)
    if (!v) return
    // a unit in error is reported; the name still counts as declared (no knock-on errors)
    const unit = this.optionalUnit(s) || null
    let fixed = false, estimate = false, steady = false
    let interp: 'linear' | 'hold' = 'linear'
    let bounds: { lo: number; hi: number; span: Span; loSpan: Span; hiSpan: Span } | null = null
    let description = ''
    const allowed: Record<string, string[]> = {
      param: ['fixed', 'in'], state: ['estimate', 'steady', 'in'], input: ['linear', 'hold'], const: [],
    }
    for (;;) {
      if (s.atEnd()) break
      const str = s.string()
      if (str === 'unclosed') { d.error(s.restSpan(), 'the description has no closing "'); return }
      if (str) { description = str.text; this.trailing(s, 'the description'); break }
      const w = s.ident()
      if (!w) {
        const t = s.word()
        if (s.text[t.span.column - 1] === '[' && unit === null) d.error(t.span, `a unit must follow the value directly; write ${example}`)
        else d.error(t.span, `unexpected '${t.text.slice(0, 40)}' in the ${kw} declaration`)
        return
      }
      let word = w.text
      if (!allowed[kw].includes(word)) {
        const opts = allowed[kw]
        const near = closest(word, opts)
        d.error(w.span, `unexpected '${word}' in a ${kw} declaration${opts.length ? ` (allowed: ${opts.join(', ')}, then "description")` : ' (allowed: a "description")'}${near ? ` (did you mean '${near}'?)` : ''}`, near ? replaceFix(w.span, near) : null)
        if (!near) return
        // read on as the word meant, so the declaration still counts (no knock-on errors)
        word = near
      }
      if (word === 'fixed') fixed = true
      else if (word === 'estimate') estimate = true
      else if (word === 'steady') steady = true
      else if (word === 'linear' || word === 'hold') interp = word
      else if (word === 'in') {
        const bb = s.bracket()
        if (bb === 'unclosed') { d.error(s.restSpan(), "bounds have no closing ']'"); return }
        if (!bb) { d.error(s.restSpan(), 'expected bounds after in: in [lower, upper]'); return }
        const parts = bb.inner.split(',')
        if (parts.length !== 2) { d.error(bb.tok.span, 'bounds must be two numbers: in [lower, upper]'); return }
        const lo = this.boundNumber(parts[0], bb.innerCol, s.line, 'lower bound')
        const hi = this.boundNumber(parts[1], bb.innerCol + parts[0].length + 1, s.line, 'upper bound')
        if (!lo || !hi) return
        bounds = { lo: lo.value, hi: hi.value, span: bb.tok.span, loSpan: lo.span, hiSpan: hi.span }
      }
    }
    if (bounds) {
      if (!(bounds.lo < bounds.hi)) {
        d.error(bounds.span, `bounds reversed or empty: the lower bound ${bounds.lo} must be below the upper bound ${bounds.hi}`)
        return
      }
      if (v.value < bounds.lo || v.value > bounds.hi) {
        d.error(v.span, `value ${v.value} is outside the bounds [${bounds.lo}, ${bounds.hi}]`)
        return
      }
    }
    const sc = unit ? unit.scale : 1
    const of = unit ? unit.offset : 0
    const conv = (x: number | null) => (x === null || !Number.isFinite(x) ? (x === null ? null : x) : x * sc + of)
    const base = { name: name.text, description, unit, span: name.span }
    const lower = bounds && Number.isFinite(bounds.lo) ? bounds.lo : null
    const upper = bounds && Number.isFinite(bounds.hi) ? bounds.hi : null
    if (kind === 'param' && !bounds && !fixed) d.warning(name.span, `param ${name.text} has neither bounds nor fixed: a fit treats it as free and unbounded (write in [lower, upper])`)
    if (kind === 'state' && steady && estimate) d.warning(name.span, `state ${name.text} is both steady and estimate: the steady state wins`)
    const names = range ? this.expandRange(name, kind, range) : [name]
    for (const nm of names) {
      const decl = { ...base, name: nm.text }
      switch (kind) {
        case 'param':
          this.register(nm, kind, this.params.length)
          this.params.push({ ...decl, value: conv(v.value)!, declaredValue: v.value, lower: conv(lower), upper: conv(upper), declaredLower: lower, declaredUpper: upper, fixed })
          break
        case 'state':
          this.register(nm, kind, this.states.length)
          this.states.push({ ...decl, initial: conv(v.value)!, declaredInitial: v.value, estimate, steady, lower: conv(lower), upper: conv(upper), declaredLower: lower, declaredUpper: upper })
          break
        case 'const':
          this.register(nm, kind, this.consts.length)
          this.consts.push({ ...decl, value: conv(v.value)!, declaredValue: v.value })
          break
        case 'input':
          this.register(nm, kind, this.inputs.length)
          this.inputs.push({ ...decl, value: conv(v.value)!, declaredValue: v.value, interp })
          break
        default: break
      }
    }
  }

  // ---------------------------------------------------------------- index ranges
  /** the names `base[lo]` … `base[hi]` of an indexed declaration (the base is remembered) */
  private expandRange(name: Tok, kind: Kind, r: Range): Tok[] {
    this.ranges.set(name.text, { lo: r.lo, hi: r.hi, kind, span: name.span })
    const out: Tok[] = []
    for (let k = r.lo; k <= r.hi; k++) out.push({ text: `${name.text}[${k}]`, span: name.span })
    return out
  }

  /**
   * `[lo..hi]`, `[i in lo..hi]` or `[k]` written directly after a name. Bounds are whole numbers
   * or integer consts declared above, with + and - terms (`N-1`). Null after reporting.
   */
  private rangeAfter(s: LineScanner, what: string): Range | null {
    const d = this.diags
    const open = s.pos
    const close = s.text.indexOf(']', open)
    if (close < 0) { d.error(s.restSpan(), `the index of ${what} has no closing ']'`); return null }
    const span = s.span(open, close + 1)
    const inner = s.text.slice(open + 1, close)
    s.pos = close + 1
    let v: string | null = null
    let body = inner
    const m = /^\s*([A-Za-z_][A-Za-z0-9_]*)\s+in\s+(.*)$/.exec(inner)
    if (m) {
      v = m[1]
      body = m[2]
      if (RESERVED.has(v) || this.names.has(v)) { d.error(span, `the index variable '${v}' must not be a declared or reserved name`); return null }
    }
    const dots = body.indexOf('..')
    if (dots < 0) {
      if (v !== null) { d.error(span, `expected a range after '${v} in': [${v} in 1..N]`); return null }
      const k = this.indexValue(body, span)
      return k === null ? null : { v, lo: k, hi: k, single: true, span }
    }
    const lo = this.indexValue(body.slice(0, dots), span)
    const hi = this.indexValue(body.slice(dots + 2), span)
    if (lo === null || hi === null) return null
    if (hi < lo) { d.error(span, `empty range ${lo}..${hi}: the first index must not exceed the last`); return null }
    if (hi - lo + 1 > MAX_RANGE) { d.error(span, `the range ${lo}..${hi} is too long (at most ${MAX_RANGE} indices)`); return null }
    return { v, lo, hi, single: false, span }
  }

  /** a whole number, or integer consts and numbers joined by + and - */
  private indexValue(text: string, span: Span): number | null {
    const t = text.trim()
    if (!/^[+-]?\s*(?:\d+|[A-Za-z_][A-Za-z0-9_.]*)(?:\s*[+-]\s*(?:\d+|[A-Za-z_][A-Za-z0-9_.]*))*$/.test(t)) {
      this.diags.error(span, `an index bound must be a whole number or an integer const, with + and - (found '${t.slice(0, 40)}')`)
      return null
    }
    let total = 0
    const re = /([+-]?)\s*(\d+|[A-Za-z_][A-Za-z0-9_.]*)/g
    let m: RegExpExecArray | null
    while ((m = re.exec(t)) !== null) {
      let val: number
      if (/^\d/.test(m[2])) val = Number(m[2])
      else {
        const ent = this.names.get(m[2])
        if (!ent || ent.kind !== 'const') {
          this.diags.error(span, ent ? `'${m[2]}' is a ${ent.kind}: index bounds use whole numbers and consts declared above` : `unknown name '${m[2]}' in an index bound (declare const ${m[2]} = … above)`)
          return null
        }
        val = this.consts[ent.index].value
        if (!Number.isInteger(val)) { this.diags.error(span, `const ${m[2]} = ${val} is not a whole number and cannot size a range`); return null }
      }
      total += m[1] === '-' ? -val : val
    }
    return total
  }

  private boundNumber(part: string, col: number, line: number, what: string): { value: number; span: Span } | null {
    const lead = part.length - part.trimStart().length
    const txt = part.trim()
    const span = { line, column: col + lead, endColumn: col + lead + Math.max(1, txt.length) }
    if (txt === '') { this.diags.error(span, `missing ${what}`); return null }
    return this.checkNumber({ text: txt, span }, what, true)
  }

  private lookup(s: LineScanner, lines: string[], i: number): number {
    const d = this.diags
    const name = this.declareName(s, 'lookup')
    if (!name) return this.skipBraces(lines, i)
    let argUnit: UnitInfo | null = null
    let unit: UnitInfo | null = null
    const b1 = s.bracket()
    if (b1 === 'unclosed') { d.error(s.restSpan(), "unit has no closing ']'"); return i }
    if (b1) {
      const u = this.unitAt(b1)
      if (u === false) return this.skipBraces(lines, i)
      argUnit = u
      if (!s.eat('->')) { d.error(s.restSpan(), `expected '->' and the result unit: lookup ${name.text} [arg unit] -> [result unit] = { x: y, … }`); return this.skipBraces(lines, i) }
      const b2 = s.bracket()
      if (b2 === 'unclosed' || !b2) { d.error(s.restSpan(), `expected the result unit in [..] after '->'`); return this.skipBraces(lines, i) }
      const u2 = this.unitAt(b2)
      if (u2 === false) return this.skipBraces(lines, i)
      unit = u2
    }
    if (!s.eat('=')) { d.error(s.restSpan(), `missing value: write lookup ${name.text} [unit] -> [unit] = { x1: y1, x2: y2 }`); return this.skipBraces(lines, i) }
    if (!s.eat('{')) { d.error(s.restSpan(), `expected '{' and the points: { x1: y1, x2: y2 }`); return i }
    // the points may continue over the following lines until '}'
    const segs: { text: string; line: number; col0: number }[] = []
    let last = i
    let rest = s.text.slice(s.pos)
    let col0 = s.pos
    let closed = false
    for (;;) {
      const close = rest.indexOf('}')
      if (close >= 0) {
        segs.push({ text: rest.slice(0, close), line: last + 1, col0 })
        const after = rest.slice(close + 1)
        if (after.trim() !== '') {
          const off = col0 + close + 1 + (after.length - after.trimStart().length)
          d.error({ line: last + 1, column: off + 1, endColumn: off + 1 + after.trim().length }, "unexpected text after the lookup's '}'")
        }
        closed = true
        break
      }
      segs.push({ text: rest, line: last + 1, col0 })
      if (last + 1 >= lines.length || last - i > 10_000) break
      last++
      rest = stripComment(lines[last])
      col0 = 0
    }
    if (!closed) { d.error(name.span, `lookup ${name.text} has no closing '}'`); return last }
    const xs: number[] = []
    const ys: number[] = []
    for (const seg of segs) {
      let off = 0
      for (const part of seg.text.split(',')) {
        const here = off
        off += part.length + 1
        if (part.trim() === '') continue
        const colon = part.indexOf(':')
        const at = (o: number, len: number): Span => ({ line: seg.line, column: seg.col0 + here + o + 1, endColumn: seg.col0 + here + o + 1 + Math.max(1, len) })
        const lead = part.length - part.trimStart().length
        if (colon < 0) { d.error(at(lead, part.trim().length), `a lookup point is written x: y, found '${part.trim().slice(0, 40)}'`); return last }
        const xt = part.slice(0, colon)
        const yt = part.slice(colon + 1)
        const xv = this.checkNumber({ text: xt.trim(), span: at(xt.length - xt.trimStart().length, xt.trim().length) }, 'lookup point', false)
        const ylead = colon + 1 + (yt.length - yt.trimStart().length)
        const yv = this.checkNumber({ text: yt.trim(), span: at(ylead, yt.trim().length) }, 'lookup value', false)
        if (!xv || !yv) return last
        if (xs.length > 0 && !(xv.value > xs[xs.length - 1])) {
          d.error(xv.span, `lookup points must increase: ${xv.value} follows ${xs[xs.length - 1]}`)
          return last
        }
        xs.push(xv.value)
        ys.push(yv.value)
      }
    }
    if (xs.length < 2) { d.error(name.span, `lookup ${name.text} needs at least two points`); return last }
    const xsc = argUnit ? argUnit.scale : 1, xof = argUnit ? argUnit.offset : 0
    const ysc = unit ? unit.scale : 1, yof = unit ? unit.offset : 0
    this.statements++
    this.register(name, 'lookup', this.lookups.length)
    this.lookups.push({
      name: name.text, description: '', unit, argUnit, span: name.span,
      xs: Float64Array.from(xs, (x) => x * xsc + xof), ys: Float64Array.from(ys, (y) => y * ysc + yof),
    })
    return last
  }

  private skipBraces(lines: string[], i: number): number {
    const first = stripComment(lines[i])
    if (!first.includes('{') || first.includes('}')) return i
    for (let j = i + 1; j < lines.length && j < i + 10_000; j++) if (stripComment(lines[j]).includes('}')) return j
    return i
  }

  /** the expression that runs from the scanner's position to `end` (exclusive, 0-based) */
  private rawExpr(s: LineScanner, end: number): RawExpr {
    const start = s.pos
    const text = s.text.slice(start, end)
    const lead = text.length - text.trimStart().length
    s.pos = end
    return { text: text.trim(), line: s.line, col0: start + lead + 1 }
  }

  /** end of an expression: the first '"' (a description), or `stop` words for outputs */
  private exprEnd(s: LineScanner, stopAtUnit: boolean): number {
    const t = s.text
    let end = t.length
    // a description is a final "…" that ends the line; any other quote stays in the expression
    // (where the expression check refuses it with its place)
    const m0 = /"[^"]*"\s*$/.exec(t.slice(s.pos))
    if (m0) end = s.pos + m0.index
    if (stopAtUnit) {
      const br = unitBracket(t, s.pos)
      if (br >= 0 && br < end) end = br
      const re = /\bsigma\b/g
      re.lastIndex = s.pos
      const m = re.exec(t)
      if (m && m.index < end) end = m.index
    }
    return end
  }

  private description(s: LineScanner): string {
    const str = s.string()
    if (str === 'unclosed') { this.diags.error(s.restSpan(), 'the description has no closing "'); return '' }
    if (!str) return ''
    this.trailing(s, 'the description')
    return str.text
  }

  private letLine(s: LineScanner): void {
    const name = this.declareName(s, 'let')
    if (!name) return
    let range: Range | null = null
    if (s.text[s.pos] === '[') {
      range = this.rangeAfter(s, name.text)
      if (!range) return
      if (range.single) { this.diags.error(range.span, `an indexed let needs a range: let ${name.text}[i in 1..N] = …`); return }
    }
    if (!s.eat('=')) { this.diags.error(s.restSpan(), `missing value: write let ${name.text} = <expression>`); return }
    const raw = this.rawExpr(s, this.exprEnd(s, true))
    const unit = this.optionalUnit(s) || null
    const description = this.description(s)
    if (!s.atEnd()) { this.trailing(s, 'the let'); return }
    const names = range ? this.expandRange(name, 'let', range) : [name]
    names.forEach((nm, j) => {
      this.register(nm, 'let', this.lets.length)
      const env = range && range.v !== null ? { v: range.v, k: range.lo + j } : null
      this.lets.push({ decl: { name: nm.text, description, unit, span: name.span, text: raw.text }, raw, env })
    })
  }

  /**
   * A derivative line `dh/dt = …` (or the older `h' = …`, read with a warning); the head was found
   * by derivativeHead (leibniz.ts).
   */
  private derivativeLine(s: LineScanner, h: DerivativeHead): void {
    const lead = s.pos
    s.pos = h.nameAt
    const before = this.diags.items.length
    const name = this.name(s)
    if (!name || name.text !== h.name) {
      // name() has reported a qualified name outside a sheet with parts
      if (this.diags.items.length === before) this.diags.error(s.span(lead, h.end), `expected a state name in ${s.text.slice(lead, h.end).trim()}`)
      return
    }
    let r: Range | null = null
    if (h.index) {
      r = this.rangeAfter(s, name.text)
      if (!r) return
    }
    const head = s.span(lead, h.end)
    if (h.older) this.diags.warning(head, olderFormMessage(name.text + h.index))
    s.pos = h.end
    this.equation(s, name, 'derivative', r ?? undefined, head)
  }

  private equation(s: LineScanner, name: Tok, form: 'derivative' | 'next', range?: Range, head?: Span): void {
    const lhs = head ? s.text.slice(head.column - 1, head.endColumn - 1) : `next ${name.text}`
    if (!s.eat('=')) { this.diags.error(s.restSpan(), `expected '=' after ${lhs}`); return }
    const raw = this.rawExpr(s, this.exprEnd(s, false))
    if (!s.atEnd()) this.trailing(s, 'the equation')
    const span = head ?? { ...name.span, endColumn: range ? range.span.endColumn : name.span.endColumn }
    if (!range) { this.eqs.push({ name: name.text, span, form, raw, env: null }); return }
    if (!this.ranges.has(name.text)) {
      this.diags.error(name.span, `${name.text} is not an indexed state: declare state ${name.text}[1..N] = …`)
      return
    }
    for (let k = range.lo; k <= range.hi; k++) {
      this.eqs.push({ name: `${name.text}[${k}]`, span, form, raw, env: range.v !== null ? { v: range.v, k } : null })
    }
  }

  private output(s: LineScanner): void {
    const d = this.diags
    const name = s.ident()
    if (!name) { d.error(s.atEnd() ? s.here() : s.word().span, 'expected a name after output'); return }
    if (RESERVED.has(name.text)) { d.error(name.span, `'${name.text}' is a reserved word and cannot be used as a name`); return }
    const dup = this.outs.find((o) => o.decl.name === name.text)
    if (dup) { d.error(name.span, `duplicate output '${name.text}': already declared at line ${dup.decl.span.line}`); return }
    if (!s.eat('=')) {
      d.error(s.atEnd() ? name.span : s.restSpan(), `output ${name.text} names nothing: write output ${name.text} = <expression> [unit]`)
      return
    }
    const raw = this.rawExpr(s, this.exprEnd(s, true))
    if (raw.text === '') {
      d.error(name.span, `output ${name.text} names nothing: write output ${name.text} = <expression> [unit]`)
      return
    }
    const unit = this.optionalUnit(s) || null
    let sigma: number | null = null
    if (s.peekIdent() === 'sigma') {
      s.ident()
      const v = this.number(s, 'noise standard deviation', 'sigma 0.01')
      if (!v) return
      if (!(v.value > 0)) { d.error(v.span, 'sigma must be positive'); return }
      sigma = v.value
    }
    const description = this.description(s)
    if (!s.atEnd()) { this.trailing(s, 'the output'); return }
    this.outs.push({ decl: { name: name.text, description, unit, span: name.span, text: raw.text, sigma: null, declaredSigma: sigma }, raw })
  }

  // ---------------------------------------------------------------- second pass
  private context(): ExprContext {
    const d = this.diags
    const all = () => [...this.names.keys(), 't', 'pi', 'e']
    return {
      diags: d,
      symbol: (name, cols) => {
        for (let j = this.indexEnv.length - 1; j >= 0; j--) if (this.indexEnv[j].v === name) return { k: 'num', v: this.indexEnv[j].k }
        if (name === 't') return { k: 't' }
        if (name === 'pi') return { k: 'num', v: Math.PI }
        if (name === 'e') return { k: 'num', v: Math.E }
        const ent = this.names.get(name)
        if (!ent) {
          this.pendingError(cols, this.unknownName(name, all), this.nameFix(name, all, cols))
          return null
        }
        switch (ent.kind) {
          case 'state': return { k: 'x', i: ent.index }
          case 'param': return { k: 'p', i: ent.index }
          case 'input': return { k: 'u', i: ent.index }
          case 'const': return { k: 'c', i: ent.index }
          case 'let': return { k: 'let', i: ent.index }
          case 'mode': return { k: 'm', i: ent.index }
          case 'lookup':
            this.pendingError(cols, `lookup ${name} must be called with its argument: ${name}(x)`)
            return null
        }
      },
      lookupIndex: (name) => {
        const ent = this.names.get(name)
        return ent && ent.kind === 'lookup' ? ent.index : null
      },
      delay: (uName, uCols, tauName, tauCols) => {
        const ent = this.names.get(uName)
        if (!ent) { this.pendingError(uCols, `unknown name '${uName}'${didYouMean(uName, all())}`); return null }
        if (ent.kind !== 'input') { this.pendingError(uCols, `delay applies only to inputs: '${uName}' is a ${ent.kind}`); return null }
        if (tauName === null) { this.pendingError(tauCols, 'the delay tau must be the name of a param or const (>= 0)'); return null }
        const te = this.names.get(tauName)
        if (!te) { this.pendingError(tauCols, `unknown name '${tauName}'${didYouMean(tauName, all())}`); return null }
        let tau: Expr
        let info: DelayInfo
        if (te.kind === 'param') {
          const p = this.params[te.index]
          if (p.value < 0 || (p.lower !== null && p.lower < 0) || p.lower === null) {
            this.pendingError(tauCols, `the delay ${tauName} must stay >= 0: give it bounds in [0, …] (or make it a const)`)
            return null
          }
          tau = { k: 'p', i: te.index }
          info = { input: ent.index, param: te.index, constValue: p.value }
        } else if (te.kind === 'const') {
          const c = this.consts[te.index]
          if (c.value < 0) { this.pendingError(tauCols, `the delay ${tauName} must be >= 0`); return null }
          tau = { k: 'c', i: te.index }
          info = { input: ent.index, param: null, constValue: c.value }
        } else {
          this.pendingError(tauCols, `the delay tau must be a param or const; '${tauName}' is a ${te.kind}`)
          return null
        }
        const unitTau = te.kind === 'param' ? this.params[te.index].unit : this.consts[te.index].unit
        if (unitTau && !sameDims(unitTau.dims, TIME_DIMS)) {
          this.pendingError(tauCols, `the delay ${tauName} must be a time, but its unit is ${unitTau.text}`)
          return null
        }
        const key = `${ent.index}|${te.kind}|${te.index}`
        let k = this.delayKeys.get(key)
        if (k === undefined) {
          k = this.delays.length
          this.delays.push(info)
          this.delayKeys.set(key, k)
        }
        return { k: 'delay', input: ent.index, slot: this.inputs.length + k, tau }
      },
      callables: () => [...FUNCTIONS, ...REDUCERS, 'delay', ...this.lookups.map((l) => l.name)],
      kindOf: (name) => this.names.get(name)?.kind ?? null,
      constValue: (i) => this.consts[i].value,
      bindIndex: (v, k) => {
        if (k === null) { this.indexEnv.pop(); return true }
        if (this.names.has(v) || RESERVED.has(v)) return false
        this.indexEnv.push({ v, k })
        return true
      },
    }
  }

  /** the message for a name that is not declared: an indexed base, an index out of range, a typo */
  private unknownName(name: string, all: () => string[]): string {
    const r = this.ranges.get(name)
    if (r) return `${name} is indexed over ${r.lo}..${r.hi}: write ${name}[i] (e.g. ${name}[${r.lo}])`
    const m = /^(.*)\[(-?\d+)\]$/.exec(name)
    if (m) {
      const b = this.ranges.get(m[1])
      if (b) return `index ${m[2]} is outside ${m[1]}[${b.lo}..${b.hi}]`
      if (this.names.has(m[1])) return `${m[1]} is not indexed: write ${m[1]} without [..]`
    }
    if (name.length > 1 && name.startsWith('d') && this.names.get(name.slice(1))?.kind === 'state') {
      return `unknown name '${name}': on a right side ${name}/dt would be ${name} divided by dt; the derivative of ${name.slice(1)} is written only at the head of its own line, ${derivativeName(name.slice(1))} = …`
    }
    return `unknown name '${name}'${didYouMean(name, all())}`
  }

  /** the fix of an unknown name that is a near miss of a declared one */
  private nameFix(name: string, all: () => string[], cols: Cols): DiagnosticFix | null {
    if (this.ranges.has(name) || /\[/.test(name)) return null
    const near = closest(name, all())
    return near ? replaceFix({ line: this.curLine, column: cols[0], endColumn: cols[1] }, near) : null
  }

  private curLine = 0
  private pendingError(cols: Cols, msg: string, fix?: DiagnosticFix | null): void {
    this.diags.error({ line: this.curLine, column: cols[0], endColumn: cols[1] }, msg, fix)
  }

  private build(raw: RawExpr, ctx: ExprContext, env: IndexEnv | null = null): Expr | null {
    this.curLine = raw.line
    this.indexEnv = env ? [env] : []
    const e = buildExpr(raw.text, raw.line, raw.col0, ctx)
    this.indexEnv = []
    return e
  }

  private finish(text: string): ParsedModel | null {
    const d = this.diags
    const ctx = this.context()
    const lets: LetDecl[] = []
    let broken = false
    const failedRaw = new Set<RawExpr>()
    for (const l of this.lets) {
      const e = failedRaw.has(l.raw) ? null : this.build(l.raw, ctx, l.env)
      if (!e) { broken = true; failedRaw.add(l.raw) }
      lets.push({ ...l.decl, expr: e ?? { k: 'num', v: NaN } })
    }
    const letOrder = this.orderLets(lets)
    if (!letOrder) broken = true

    const discrete = this.sample !== null
    const equations: (EquationDecl | null)[] = this.states.map(() => null)
    for (const q of this.eqs) {
      const ent = this.names.get(q.name)
      const lhs = q.form === 'derivative' ? derivativeName(q.name) : `next ${q.name}`
      if (!ent) {
        const dState = this.names.get(`d${q.name}`)?.kind === 'state' ? ` (the state d${q.name} is written ${derivativeName(`d${q.name}`)})` : ''
        d.error(q.span, `${lhs}: there is no state named '${q.name}'${dState || didYouMean(q.name, this.states.map((x) => x.name))}`)
        continue
      }
      if (ent.kind !== 'state') {
        d.error(q.span, `${lhs}: '${q.name}' is a ${ent.kind}, not a state; only states have ${q.form === 'derivative' ? 'derivatives' : 'next-equations'}`)
        continue
      }
      if (discrete && q.form === 'derivative') { d.error(q.span, `${lhs}: this sheet is discrete-time (it has a sample line): write next ${q.name} = …`); continue }
      if (!discrete && q.form === 'next') { d.error(q.span, `${lhs}: next-equations need a sample line (sample 1 [s]); a continuous sheet writes ${derivativeName(q.name)} = …`); continue }
      const prev = equations[ent.index]
      if (prev) { d.error(q.span, `second equation for ${q.name} (the first is at line ${prev.span.line})`); continue }
      const e = failedRaw.has(q.raw) ? null : this.build(q.raw, ctx, q.env)
      if (!e) { broken = true; failedRaw.add(q.raw) }
      equations[ent.index] = { state: ent.index, expr: e ?? { k: 'num', v: NaN }, text: q.raw.text, span: q.span, form: q.form, timeFactor: 1 }
    }
    if (this.states.length === 0) {
      d.error({ line: 1, column: 1, endColumn: 2 }, 'the sheet declares no state: add state x = <initial value> [unit] and its equation')
    }
    const missing = new Set<Span>()
    this.states.forEach((st, i) => {
      if (equations[i] || missing.has(st.span)) return
      missing.add(st.span)
      d.error(st.span, discrete ? `state ${st.name} has no next-equation: add next ${st.name} = …` : `state ${st.name} has no derivative: add ${derivativeName(st.name)} = …`)
    })
    const outputs: OutputDecl[] = []
    for (const o of this.outs) {
      const e = this.build(o.raw, ctx)
      if (!e) { broken = true; continue }
      let unit = o.decl.unit
      if (!unit && (e.k === 'x' || e.k === 'p' || e.k === 'u' || e.k === 'c' || e.k === 'let')) unit = this.unitOfRef(e.k, e.i)
      const sigma = o.decl.declaredSigma === null ? null : o.decl.declaredSigma * (unit ? unit.scale : 1)
      let touches = false
      walk(e, (n) => { if (n.k === 'x' || n.k === 'p' || n.k === 'u' || n.k === 'let' || n.k === 'delay' || n.k === 't' || n.k === 'm') touches = true })
      if (!touches) d.warning(o.decl.span, `output ${o.decl.name} depends on no state, parameter or input`)
      outputs.push({ ...o.decl, unit, expr: e, sigma })
    }
    if (this.outs.length === 0 && this.states.length > 0) d.warning({ line: 1, column: 1, endColumn: 2 }, 'the sheet has no output: a fit needs at least one output compared with data')

    const spt = SECONDS_PER[this.timeUnit]
    let sampleTime: number | null = null
    if (this.sample) sampleTime = this.sample.unit === '' ? this.sample.value : (this.sample.value * SECONDS_PER[this.sample.unit as TimeUnit]) / spt

    const events = buildEvents(this.rawEvents, {
      diags: d,
      discrete,
      lookup: (name) => this.names.get(name) ?? null,
      states: this.states,
      modes: this.modes,
      build: (raw) => this.build(raw, ctx),
      unknown: (name) => this.unknownName(name, () => [...this.names.keys()]),
    })
    if (events === null) broken = true

    if (broken || d.hasErrors) return null
    const model: ParsedModel = {
      hash: hashText(text),
      title: this.title,
      kind: discrete ? 'discrete' : 'continuous',
      timeUnit: this.timeUnit,
      secondsPerTimeUnit: spt,
      sampleTime,
      states: this.states,
      params: this.params,
      consts: this.consts,
      inputs: this.inputs,
      lookups: this.lookups,
      lets,
      letOrder: letOrder!,
      equations: equations as EquationDecl[],
      outputs,
      delays: this.delays,
      modes: this.modes,
      events: events!,
    }
    checkUnits(model, d)
    checkComparisons(model, d)
    return model
  }

  private unitOfRef(k: string, i: number): UnitInfo | null {
    switch (k) {
      case 'x': return this.states[i].unit
      case 'p': return this.params[i].unit
      case 'u': return this.inputs[i].unit
      case 'c': return this.consts[i].unit
      case 'let': return this.lets[i].decl.unit
      default: return null
    }
  }

  /** topological order of the lets; reports each cycle by name */
  private orderLets(lets: LetDecl[]): number[] | null {
    const n = lets.length
    const deps: number[][] = lets.map((l) => {
      const out = new Set<number>()
      walk(l.expr, (x) => { if (x.k === 'let') out.add(x.i) })
      return [...out]
    })
    const state = new Uint8Array(n) // 0 new, 1 on stack, 2 done
    const order: number[] = []
    let ok = true
    // iterative depth-first search (a sheet may hold thousands of lets)
    for (let r = 0; r < n; r++) {
      if (state[r]) continue
      const stack: { v: number; k: number }[] = [{ v: r, k: 0 }]
      state[r] = 1
      while (stack.length) {
        const top = stack[stack.length - 1]
        if (top.k < deps[top.v].length) {
          const w = deps[top.v][top.k++]
          if (state[w] === 0) { state[w] = 1; stack.push({ v: w, k: 0 }) }
          else if (state[w] === 1) {
            const from = stack.findIndex((f) => f.v === w)
            const cyc = stack.slice(from).map((f) => lets[f.v].name)
            cyc.push(lets[w].name)
            const at = stack.slice(from).map((f) => f.v).sort((a, b) => lets[a].span.line - lets[b].span.line)[0]
            this.diags.error(lets[at].span, `let cycle: ${cyc.join(' -> ')}`)
            ok = false
          }
        } else {
          state[top.v] = 2
          order.push(top.v)
          stack.pop()
        }
      }
    }
    return ok ? order : null
  }
}

/**
 * One expression of a sheet: guarded, parsed with mathjs `parse`, checked against the whitelist
 * and converted to our own tree (ast.ts) with names resolved. User text never reaches generated
 * code: the tree holds numbers and indices only.
 */
import { parse } from '../mathjs-lite'
import type { MathNode } from 'mathjs'
import { type Cols, type Expr, type FnName, type CmpOp, FUNCTIONS, constValue, fold } from './ast'
import { type DiagnosticList, replaceFix } from './diagnostics'
import { closest } from '../did-you-mean'
import { expandSmooth, isSmoothName, SMOOTH_FUNCTIONS, smoothSignature } from './smooth'

export const MAX_EXPRESSION_LENGTH = 4000
export const MAX_NESTING = 64
/** the most terms one sum(…) or prod(…) may expand to */
export const MAX_REDUCTION = 10_000
/**
 * Operator chains count towards the depth: every `^` (right-associative, and its derivative grows with
 * the square of the chain), unary sign, function call and ?: adds a level; a run of `+ -` or of `* /`
 * at one level adds one level for the whole run but may hold at most MAX_CHAIN operators.
 */
export const MAX_DEPTH = MAX_NESTING
export const MAX_CHAIN = 1000

/** What the expression builder needs from the sheet. */
export interface ExprContext {
  diags: DiagnosticList
  /** a plain name: a ref, or null after reporting */
  symbol(name: string, cols: Cols): Expr | null
  lookupIndex(name: string): number | null
  /** delay(input, tau) → a delay node, or null after reporting */
  delay(inputName: string, inputCols: Cols, tauName: string | null, tauCols: Cols): Expr | null
  /** names of everything callable, for did-you-mean */
  callables(): string[]
  /** kind of a declared name, for messages */
  kindOf(name: string): string | null
  /** the value of const i (index arithmetic folds consts) */
  constValue(i: number): number
  /** bind index variable `name` to `k` (innermost), or unbind the innermost with k = null; false when the name is taken */
  bindIndex(name: string, k: number | null): boolean
}

const ALLOWED_CHARS = /[A-Za-z0-9_ \t.+\-*/^(),<>=!?:[\]]/
const OPS: Record<string, string> = {
  add: '+', subtract: '-', multiply: '*', divide: '/', pow: '^',
  smaller: '<', smallerEq: '<=', larger: '>', largerEq: '>=', equal: '==', unequal: '!=',
}

interface Leaf { start: number; end: number }

/**
 * Build the tree of `text`, found on `line` starting at column `col0` (1-based).
 * Reports every problem to ctx.diags and returns null when the expression is unusable.
 */
export function buildExpr(source: string, line: number, col0: number, ctx: ExprContext): Expr | null {
  const d = ctx.diags
  // an index range `1..N` is read as mathjs's range `1: N` (same length, so columns stay put)
  const text = source.replace(/\.\./g, ': ')
  const whole = { line, column: col0, endColumn: col0 + Math.max(1, text.length) }
  if (text.trim() === '') {
    d.error(whole, 'missing expression after =')
    return null
  }
  if (text.length > MAX_EXPRESSION_LENGTH) {
    d.error(whole, `expression is too long (${text.length} characters, at most ${MAX_EXPRESSION_LENGTH})`)
    return null
  }
  // character whitelist and nesting depth, before mathjs sees the text (its parser recurses)
  let depth = 0
  for (let i = 0; i < text.length; i++) {
    const ch = text[i]
    const at = { line, column: col0 + i, endColumn: col0 + i + 1 }
    if (!ALLOWED_CHARS.test(ch)) {
      if (ch === ';') d.error(at, "only one equation per line: ';' is not allowed")
      else if (ch === '"' || ch === "'" || ch === '`') d.error(at, 'text in quotes is not allowed in an expression')
      else if (ch === '{' || ch === '}') d.error(at, `'${ch}' is not allowed in an expression`)
      else d.error(at, `unexpected character ${printable(ch)} in an expression`)
      return null
    }
    if (ch === '(') {
      depth++
      if (depth > MAX_NESTING) {
        d.error(at, `parentheses are nested too deeply (more than ${MAX_NESTING} levels)`)
        return null
      }
    } else if (ch === ')') depth--
    if (depth < 0) {
      d.error(at, "unmatched ')'")
      return null
    }
  }
  if (depth > 0) {
    d.error(whole, "unclosed '(': a ')' is missing")
    return null
  }
  let node: MathNode
  try {
    node = parse(text)
  } catch (e) {
    const err = e as { message?: string; char?: number }
    const c = typeof err.char === 'number' && err.char >= 0 ? Math.min(err.char, text.length) : 0
    const msg = String(err.message ?? 'syntax error').replace(/\s*\(char \d+\)/, '')
    d.error({ line, column: col0 + Math.max(0, c - 1), endColumn: col0 + Math.max(1, c) }, `syntax error: ${msg}`)
    return null
  }
  const leaves = scanLeaves(text)
  const conv = new Converter(text, line, col0, ctx, leaves)
  const e = conv.convert(node, 0)
  if (conv.failed || !e) return null
  // the whole right side is the place of a message about its unit
  return { ...e, s: [col0, col0 + text.length] } as Expr
}

/** `+ -` and `* /` runs count as one level (their operators as a chain); every other operator is a level */
function chainGroup(fn: string | undefined): 'add' | 'mul' | null {
  if (fn === 'add' || fn === 'subtract') return 'add'
  if (fn === 'multiply' || fn === 'divide') return 'mul'
  return null
}

function printable(ch: string): string {
  const c = ch.codePointAt(0) ?? 0
  if (c < 32 || c === 127 || c > 126) return `(code ${c})`
  return `'${ch}'`
}

/** Numbers and names in textual order (these match mathjs's leaves in in-order traversal). */
function scanLeaves(text: string): Leaf[] {
  const out: Leaf[] = []
  const re = /(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?|[A-Za-z_][A-Za-z0-9_]*/g
  let m: RegExpExecArray | null
  while ((m = re.exec(text)) !== null) out.push({ start: m.index, end: m.index + m[0].length })
  return out
}

class Converter {
  failed = false
  private leafIndex = 0
  private leavesOk = true
  constructor(
    private readonly text: string,
    private readonly line: number,
    private readonly col0: number,
    private readonly ctx: ExprContext,
    private readonly leaves: Leaf[],
  ) {}

  private nextLeaf(): Cols | null {
    const l = this.leaves[this.leafIndex++]
    if (!l) { this.leavesOk = false; return null }
    return [this.col0 + l.start, this.col0 + l.end]
  }
  private wholeCols(): Cols { return [this.col0, this.col0 + Math.max(1, this.text.length)] }
  private fail(cols: Cols | undefined, msg: string, fixText?: string | null): null {
    const c = cols ?? this.wholeCols()
    const span = { line: this.line, column: c[0], endColumn: c[1] }
    this.ctx.diags.error(span, msg, fixText ? replaceFix(span, fixText) : null)
    this.failed = true
    return null
  }
  private span(parts: (Cols | undefined)[]): Cols | undefined {
    if (!this.leavesOk) return this.wholeCols()
    let a = Infinity, b = -Infinity
    for (const p of parts) if (p) { a = Math.min(a, p[0]); b = Math.max(b, p[1]) }
    return a === Infinity ? undefined : [a, b]
  }

  private tooDeep = false

  /** the place of the next leaf (the leftmost of the subtree about to be converted) */
  private hereCols(): Cols {
    const l = this.leaves[this.leafIndex]
    return l ? [this.col0 + l.start, this.col0 + l.end] : this.wholeCols()
  }

  /** `depth`: operator levels above n (see MAX_DEPTH); `chain`: operators of n's `+ -` or `* /` run above n (n is number chain + 1 of the run) */
  convert(n: MathNode, depth: number, chain = 0): Expr | null {
    if (depth > MAX_DEPTH || chain >= MAX_CHAIN) {
      if (this.tooDeep) { this.failed = true; return null }
      this.tooDeep = true
      return this.fail(this.hereCols(), depth > MAX_DEPTH
        ? `expression is nested too deeply (more than ${MAX_DEPTH} levels; each ^ of a chain such as x^x^x, each sign, function call and ?: counts one level): split it with let`
        : `too many operators in one chain of + - or * / (more than ${MAX_CHAIN}): split it with let`)
    }
    const node = n as MathNode & Record<string, unknown>
    switch (n.type) {
      case 'ConstantNode': {
        const cols = this.nextLeaf() ?? undefined
        const v = (node as unknown as { value: unknown }).value
        if (typeof v !== 'number') {
          if (typeof v === 'string') return this.fail(cols, 'text in quotes is not allowed in an expression')
          return this.fail(cols, `'${String(v)}' is not allowed in an expression: write a number`)
        }
        return { k: 'num', v, s: cols }
      }
      case 'SymbolNode': {
        const cols = this.nextLeaf() ?? this.wholeCols()
        const name = (node as unknown as { name: string }).name
        const r = this.ctx.symbol(name, cols)
        if (!r) { this.failed = true; return null }
        return { ...r, s: cols } as Expr
      }
      case 'ParenthesisNode':
        return this.convert((node as unknown as { content: MathNode }).content, depth)
      case 'OperatorNode': {
        const op = node as unknown as { fn: string; op: string; args: MathNode[]; implicit: boolean }
        if (op.implicit) {
          const a = this.convert(op.args[0], depth + 1)
          const b = op.args[1] ? this.convert(op.args[1], depth + 1) : null
          return this.fail(this.span([a?.s, b?.s]), "missing operator: write '*' between the two terms (implicit multiplication is not allowed)")
        }
        if (op.fn === 'unaryMinus' || op.fn === 'unaryPlus') {
          const a = this.convert(op.args[0], depth + 1)
          if (!a) return null
          if (op.fn === 'unaryPlus') return a
          return { k: 'neg', a, s: a.s }
        }
        const sym = OPS[op.fn]
        if (!sym || op.args.length !== 2) {
          // still walk the operands so that positions stay aligned
          const parts = op.args.map((x) => this.convert(x, depth + 1)?.s)
          return this.fail(this.span(parts), `operator '${op.op}' is not allowed (allowed: + - * / ^ < <= > >= == != and ?:)`)
        }
        const group = chainGroup(op.fn)
        const operand = (x: MathNode) => (group && chainGroup((x as unknown as { fn?: string }).fn) === group && x.type === 'OperatorNode' && (x as unknown as { args: MathNode[] }).args.length === 2
          ? this.convert(x, depth, chain + 1)
          : this.convert(x, depth + 1))
        const a = operand(op.args[0])
        const b = operand(op.args[1])
        if (!a || !b) return null
        const s = this.span([a.s, b.s])
        if (sym === '+' || sym === '-' || sym === '*' || sym === '/' || sym === '^') return { k: 'bin', op: sym, a, b, s }
        return { k: 'cmp', op: sym as CmpOp, a, b, s }
      }
      case 'ConditionalNode': {
        const c = node as unknown as { condition: MathNode; trueExpr: MathNode; falseExpr: MathNode }
        const ce = this.convert(c.condition, depth + 1)
        const a = this.convert(c.trueExpr, depth + 1)
        const b = this.convert(c.falseExpr, depth + 1)
        if (!ce || !a || !b) return null
        return { k: 'cond', c: ce, a, b, s: this.span([ce.s, a.s, b.s]) }
      }
      case 'FunctionNode': return this.call(node as unknown as { fn: MathNode; args: MathNode[] }, depth)
      case 'RelationalNode': return this.fail(undefined, "chained comparisons such as a < b < c are not allowed: use (a < b) * (b < c) or ?:")
      case 'AssignmentNode': return this.fail(undefined, "assignment is not allowed inside an expression (one '=' per line)")
      case 'FunctionAssignmentNode': return this.fail(undefined, 'function definitions are not allowed in a sheet')
      case 'BlockNode': return this.fail(undefined, 'only one expression per line')
      case 'AccessorNode': {
        const r = this.reference(n, depth)
        if (!r) return null
        const e = this.ctx.symbol(r.name, r.cols)
        if (!e) { this.failed = true; return null }
        return { ...e, s: r.cols } as Expr
      }
      case 'IndexNode': return this.fail(undefined, "an index [..] must follow a name: T[i]")
      case 'ArrayNode': return this.fail(undefined, 'matrices are not allowed in a sheet')
      case 'ObjectNode': return this.fail(undefined, 'objects are not allowed in a sheet')
      case 'RangeNode': return this.fail(undefined, "a range (a..b) may only follow 'in' inside sum(i in a..b, …) or prod(…); for a conditional write cond ? a : b")
      default: return this.fail(undefined, `'${n.type}' is not allowed in an expression`)
    }
  }

  /**
   * A qualified or indexed name: `upper.level`, `T[i-1]`, `upper.T[N]`. The index is evaluated
   * now (index variables and consts are known), so `T[i-1]` becomes the plain name `T[4]`.
   */
  private reference(n: MathNode, depth: number): { name: string; cols: Cols } | null {
    if (n.type === 'SymbolNode') {
      const cols = this.nextLeaf() ?? this.wholeCols()
      return { name: (n as unknown as { name: string }).name, cols }
    }
    if (n.type !== 'AccessorNode') return this.fail(undefined, "'.' and [..] may only follow a name")
    const a = n as unknown as { object: MathNode; index: { dimensions: MathNode[]; dotNotation: boolean } }
    const obj = this.reference(a.object, depth + 1)
    if (!obj) return null
    const dims = a.index.dimensions
    if (a.index.dotNotation) {
      const cols = this.nextLeaf() ?? this.wholeCols()
      return { name: `${obj.name}.${String((dims[0] as unknown as { value: unknown }).value)}`, cols: [obj.cols[0], cols[1]] }
    }
    if (dims.length !== 1) {
      for (const x of dims) this.convert(x, depth + 1)
      return this.fail(obj.cols, `${obj.name} takes one index: ${obj.name}[i]`)
    }
    const ie = this.convert(dims[0], depth + 1)
    if (!ie) return null
    const k = this.indexOf(ie)
    if (k === null) return null
    return { name: `${obj.name}[${k}]`, cols: this.span([obj.cols, ie.s]) ?? obj.cols }
  }

  /** the whole-number value of an index expression (numbers, index variables, consts), or null after reporting */
  private indexOf(e: Expr): number | null {
    const v = constValue(fold(e, (i) => this.ctx.constValue(i)))
    if (v === null) return this.fail(e.s, 'an index must be computed from whole numbers, index variables and consts (not from states, params, inputs or lets)')
    if (!Number.isInteger(v)) return this.fail(e.s, `an index must be a whole number, this one is ${v}`)
    return v
  }

  /** sum(i in a..b, body) / prod(…): the body once per index, combined as a balanced tree */
  private reduce(name: 'sum' | 'prod', args: MathNode[], nameCols: Cols, depth: number): Expr | null {
    const spec = args[0] as unknown as { type: string; fn?: string; args?: MathNode[] } | undefined
    const rng = spec?.args?.[1] as unknown as { type: string; start: MathNode; end: MathNode; step: MathNode | null } | undefined
    if (args.length !== 2 || spec?.type !== 'OperatorNode' || spec.fn !== 'to' || spec.args?.[0].type !== 'SymbolNode' || rng?.type !== 'RangeNode' || rng.step) {
      return this.fail(nameCols, `write ${name}(i in 1..N, expression of i)`)
    }
    const vCols = this.nextLeaf() ?? nameCols
    const v = (spec.args[0] as unknown as { name: string }).name
    const lo = this.convert(rng.start, depth + 1)
    const hi = this.convert(rng.end, depth + 1)
    if (!lo || !hi) return null
    const a = this.indexOf(lo), b = this.indexOf(hi)
    if (a === null || b === null) return null
    if (b < a) return this.fail(this.span([lo.s, hi.s]), `empty range ${a}..${b} in ${name}`)
    if (b - a >= MAX_REDUCTION) return this.fail(this.span([lo.s, hi.s]), `${name} over ${b - a + 1} terms is too long (at most ${MAX_REDUCTION})`)
    if (!this.ctx.bindIndex(v, a)) return this.fail(vCols, `the index variable '${v}' must not be a declared or reserved name`)
    const terms: Expr[] = []
    const mark = this.leafIndex
    let ok = true
    for (let k = a; k <= b && ok; k++) {
      if (k > a) { this.ctx.bindIndex(v, null); this.ctx.bindIndex(v, k) }
      this.leafIndex = mark
      const t = this.convert(args[1], depth + 1)
      if (!t) ok = false
      else terms.push(t)
    }
    this.ctx.bindIndex(v, null)
    if (!ok) return null
    const op = name === 'sum' ? '+' : '*'
    const s = this.span([nameCols, terms[0].s])
    const tree = (i: number, j: number): Expr => (j - i === 1 ? terms[i] : { k: 'bin', op, a: tree(i, (i + j) >> 1), b: tree((i + j) >> 1, j), s })
    return { ...tree(0, terms.length), s } as Expr
  }

  private call(f: { fn: MathNode; args: MathNode[] }, depth: number): Expr | null {
    let name: string
    let nameCols: Cols
    if (f.fn.type === 'SymbolNode') {
      nameCols = this.nextLeaf() ?? this.wholeCols()
      name = (f.fn as unknown as { name: string }).name
    } else if (f.fn.type === 'AccessorNode') {
      // a part's lookup: upper.valve(x)
      const r = this.reference(f.fn, depth + 1)
      if (!r) return null
      name = r.name
      nameCols = r.cols
    } else return this.fail(undefined, 'only named functions may be called')
    if (name === 'delay') return this.delayCall(f.args, nameCols, depth)
    if (name === 'sum' || name === 'prod') return this.reduce(name, f.args, nameCols, depth)
    const args: Expr[] = []
    let bad = false
    for (const a of f.args) {
      const e = this.convert(a, depth + 1)
      if (!e) bad = true
      else args.push(e)
    }
    const lk = this.ctx.lookupIndex(name)
    if (lk !== null) {
      if (bad) return null
      if (args.length !== 1) return this.fail(nameCols, `lookup ${name} takes one argument, got ${f.args.length}`)
      return { k: 'lookup', i: lk, a: args[0], d: false, s: this.span([nameCols, args[0].s]) }
    }
    if (!FUNCTIONS.includes(name)) {
      const kind = this.ctx.kindOf(name)
      if (kind) return this.fail(nameCols, `${name} is a ${kind}, not a function`)
      const near = closest(name, this.ctx.callables())
      return this.fail(nameCols, `unknown function '${name}'${near ? ` (did you mean '${near}'?)` : ''}`, nameCols && near)
    }
    if (bad) return null
    const s = this.span([nameCols, ...args.map((a) => a.s)])
    const nargs = args.length
    if (isSmoothName(name)) {
      const want = SMOOTH_FUNCTIONS[name].length
      if (nargs !== want) return this.fail(nameCols, `${name} takes ${want} arguments, got ${nargs}: ${smoothSignature(name)}`)
      return expandSmooth(name, args, s)
    }
    const fname = name as FnName
    if (fname === 'min' || fname === 'max') {
      if (nargs < 2) return this.fail(nameCols, `${fname} needs at least two arguments`)
      // n-ary min/max as nested binary calls (one active argument per derivative)
      let acc = args[0]
      for (let i = 1; i < nargs; i++) acc = { k: 'fn', f: fname, args: [acc, args[i]], s }
      return acc
    }
    if (fname === 'hypot') {
      if (nargs < 1) return this.fail(nameCols, 'hypot needs at least one argument')
      return { k: 'fn', f: fname, args, s }
    }
    const want = fname === 'atan2' || fname === 'pow' ? 2 : 1
    if (nargs !== want) return this.fail(nameCols, `${fname} takes ${want} argument${want > 1 ? 's' : ''}, got ${nargs}`)
    return { k: 'fn', f: fname, args, s }
  }

  private delayCall(args: MathNode[], nameCols: Cols, depth: number): Expr | null {
    if (args.length !== 2) {
      for (const a of args) this.convert(a, depth + 1)
      return this.fail(nameCols, 'delay takes two arguments: delay(input, tau)')
    }
    const [u, tau] = args
    if (u.type !== 'SymbolNode' && u.type !== 'AccessorNode') {
      const e = this.convert(u, depth + 1)
      this.convert(tau, depth + 1)
      return this.fail(e?.s ?? nameCols, 'delay applies only to inputs: its first argument must be the name of an input')
    }
    const ur = this.reference(u, depth + 1)
    if (!ur) return null
    const uCols = ur.cols
    const uName = ur.name
    let tauName: string | null = null
    let tauCols: Cols
    if (tau.type === 'SymbolNode' || tau.type === 'AccessorNode') {
      const tr = this.reference(tau, depth + 1)
      if (!tr) return null
      tauCols = tr.cols
      tauName = tr.name
    } else {
      const e = this.convert(tau, depth + 1)
      tauCols = e?.s ?? nameCols
      if (e && constValue(e) === null) return this.fail(tauCols, 'the delay tau must be the name of a param or const')
    }
    const r = this.ctx.delay(uName, uCols, tauName, tauCols)
    if (!r) { this.failed = true; return null }
    return { ...r, s: this.span([nameCols, uCols, tauCols]) } as Expr
  }
}

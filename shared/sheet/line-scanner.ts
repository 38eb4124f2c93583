/** A cursor over one line of a sheet (columns 1-based in what it reports). */
import type { Span } from './diagnostics'

export const NUMBER_RE = /^[+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?$/
const NUMBERISH_RE = /^[+-]?(?:\d|\.\d)[0-9A-Za-z_.]*(?:(?<=[eE])[+-][0-9A-Za-z_.]*)?/
const IDENT_RE = /^[A-Za-z_][A-Za-z0-9_]*/

export interface Tok { text: string; span: Span }

/** An expression's text as written, with its line and the 1-based column where it starts. */
export interface RawExpr { text: string; line: number; col0: number }

export class LineScanner {
  pos = 0
  constructor(readonly text: string, readonly line: number) {}

  span(start: number, end: number): Span {
    return { line: this.line, column: start + 1, endColumn: Math.max(end, start + 1) + 1 }
  }
  here(): Span {
    return { line: this.line, column: this.pos + 1, endColumn: this.pos + 2 }
  }
  skipWs(): void {
    while (this.pos < this.text.length && (this.text[this.pos] === ' ' || this.text[this.pos] === '\t')) this.pos++
  }
  atEnd(): boolean {
    this.skipWs()
    return this.pos >= this.text.length
  }
  peek(): string {
    this.skipWs()
    return this.text[this.pos] ?? ''
  }
  eat(ch: string): boolean {
    this.skipWs()
    if (this.text.startsWith(ch, this.pos)) { this.pos += ch.length; return true }
    return false
  }
  peekIdent(): string | null {
    this.skipWs()
    const m = IDENT_RE.exec(this.text.slice(this.pos, this.pos + 200))
    return m ? m[0] : null
  }
  ident(): Tok | null {
    this.skipWs()
    const m = IDENT_RE.exec(this.text.slice(this.pos))
    if (!m) return null
    const start = this.pos
    this.pos += m[0].length
    return { text: m[0], span: this.span(start, this.pos) }
  }
  /** a token that looks like a number (validated by the caller with NUMBER_RE) */
  numberish(): Tok | null {
    this.skipWs()
    const rest = this.text.slice(this.pos, this.pos + 400)
    let m = NUMBERISH_RE.exec(rest)
    if (!m) {
      const inf = /^[+-]?inf\b/.exec(rest)
      if (!inf) return null
      m = inf
    }
    const start = this.pos
    this.pos += m[0].length
    return { text: m[0], span: this.span(start, this.pos) }
  }
  /** `[ ... ]`: the text inside, or null when there is no '[' here; `unclosed` when ']' is missing */
  bracket(): { tok: Tok; inner: string; innerCol: number } | 'unclosed' | null {
    this.skipWs()
    if (this.text[this.pos] !== '[') return null
    const close = this.text.indexOf(']', this.pos + 1)
    if (close < 0) return 'unclosed'
    const start = this.pos
    const inner = this.text.slice(start + 1, close)
    this.pos = close + 1
    return { tok: { text: this.text.slice(start, close + 1), span: this.span(start, close + 1) }, inner, innerCol: start + 2 }
  }
  /** `"..."`: the text inside */
  string(): Tok | 'unclosed' | null {
    this.skipWs()
    if (this.text[this.pos] !== '"') return null
    const close = this.text.indexOf('"', this.pos + 1)
    if (close < 0) return 'unclosed'
    const start = this.pos
    this.pos = close + 1
    return { text: this.text.slice(start + 1, close), span: this.span(start, close + 1) }
  }
  /** the next whitespace-delimited word, for messages */
  word(): Tok {
    this.skipWs()
    const start = this.pos
    while (this.pos < this.text.length && this.text[this.pos] !== ' ' && this.text[this.pos] !== '\t') this.pos++
    return { text: this.text.slice(start, this.pos), span: this.span(start, this.pos) }
  }
  restSpan(): Span {
    return this.span(this.pos, Math.max(this.pos + 1, this.text.length))
  }
}

/** Remove a `#` comment (outside double quotes); returns the code part. */
export function stripComment(line: string): string {
  let inStr = false
  for (let i = 0; i < line.length; i++) {
    const c = line[i]
    if (c === '"') inStr = !inStr
    else if (c === '#' && !inStr) return line.slice(0, i)
  }
  return line
}

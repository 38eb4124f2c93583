/**
 * Derivative lines in Leibniz notation: `dh/dt = …` is the derivative of the state h with respect
 * to the time t. It is read only at the head of an equation line (the left of its `=`); anywhere
 * else `dh/dt` is an expression, the name `dh` divided by the name `dt`.
 *
 *   dh/dt = …                 state h
 *   dT[1]/dt = …              one cell of an indexed state
 *   dT[i in 2..N]/dt = …      one equation per index of the range
 *   d(upper.h)/dt = …         any name in parentheses (the flat text of a sheet with parts)
 *
 * Older sheets wrote `h' = …`; the parser still reads it with a warning, and the helpers here
 * rewrite such a line (the editor's quick fix, parts copied into a host, the calibrated sheet).
 */

const IDENT = '[A-Za-z_][A-Za-z0-9_]*'
const QNAME = `${IDENT}(?:\\.${IDENT})*`
const INDEX = '\\[[^\\]]*\\]'

/**
 * The head of a derivative line: `dNAME[…]/dt` or `d(QNAME[…])/dt` with optional blanks around
 * the slash, not followed by a name character. Groups: 1 lead, 2/3 name and index in
 * parentheses, 4/5 plain name and index.
 */
export const LEIBNIZ_HEAD_RE = new RegExp(`^(\\s*)d(?:\\((${QNAME})(${INDEX})?\\)|(${IDENT})(${INDEX})?)\\s*/\\s*dt(?![A-Za-z0-9_.])`)
/** the head of an older derivative line `NAME[…]'` (groups: 1 lead, 2 name, 3 index) */
const OLDER_HEAD_RE = new RegExp(`^(\\s*)(${QNAME})(${INDEX})?'`)

export interface DerivativeHead {
  /** the state's name as written (without its index) */
  name: string
  /** the index written after it, `[i in 2..N]`, or '' */
  index: string
  /** 0-based column where the name starts, and where the head ends */
  nameAt: number
  end: number
  older: boolean
}

/** The derivative head of a line (comment already removed or not), or null. */
export function derivativeHead(line: string): DerivativeHead | null {
  const m = LEIBNIZ_HEAD_RE.exec(line)
  if (m) {
    const paren = m[2] !== undefined
    return { name: paren ? m[2] : m[4], index: (paren ? m[3] : m[5]) ?? '', nameAt: m[1].length + (paren ? 2 : 1), end: m[0].length, older: false }
  }
  const o = OLDER_HEAD_RE.exec(line)
  if (o) return { name: o[2], index: o[3] ?? '', nameAt: o[1].length, end: o[0].length, older: true }
  return null
}

/** How a sheet writes the derivative of `name` (with its index, if any): dh/dt, dT[3]/dt, d(upper.h)/dt. */
export function derivativeName(name: string): string {
  return new RegExp(`^${IDENT}(?:${INDEX})?$`).test(name) ? `d${name}/dt` : `d(${name})/dt`
}

/** The warning at an older derivative line. */
export function olderFormMessage(name: string): string {
  return `write ${derivativeName(name)} = … ; ${name}' is the older form`
}

/** The line with an older head `h' =` written `dh/dt =` (the rest unchanged), or null when it has none. */
export function rewriteOlderLine(line: string): string | null {
  const h = derivativeHead(line)
  if (!h || !h.older) return null
  return line.slice(0, h.nameAt) + derivativeName(h.name + h.index) + line.slice(h.end)
}

/**
 * Every older derivative line of a sheet rewritten (line ends kept); `lines` are the 1-based lines
 * changed. Lines inside a lookup's points (between `{` and `}`) are left alone.
 */
export function rewriteOlderDerivatives(text: string): { text: string; lines: number[] } {
  const parts = text.split(/(\r\n|\n|\r)/)
  const lines: number[] = []
  let inLookup = false
  for (let i = 0; i < parts.length; i += 2) {
    const code = parts[i]
    if (inLookup) { if (code.includes('}')) inLookup = false; continue }
    if (/^\s*lookup\b/.test(code) && code.includes('{') && !code.includes('}')) { inLookup = true; continue }
    const r = rewriteOlderLine(code)
    if (r !== null) { parts[i] = r; lines.push(i / 2 + 1) }
  }
  return { text: parts.join(''), lines }
}

/**
 * Parts: a sheet that uses library models as parts is flattened into one plain sheet before it is
 * read. Each part's statements are copied under the part's name (`upper.h`, `upper.A`), its
 * inputs become lets bound to the host's expressions (`feed upper.q_in = q_pump`) or host inputs
 * named `upper.q_in` when left unbound, its outputs become lets (`upper.level`) the host reads,
 * and the host may redeclare a part's param, const, state or input under its qualified name to
 * override value, bounds or `fixed`. The flat text keeps the host's lines where they were (part
 * and feed lines become blank) and appends the parts' lines after them, so diagnostics on host
 * lines keep their place and those on part lines are reported at the `part` (or `feed`) line.
 *
 * Shared code never reads a library: the caller gives `resolvePart(handle, version)` (the CLI
 * reads `<handle>@<version>.sheet` files, the server the workspace library); `loadParts` fetches
 * every part a sheet needs through an asynchronous loader first.
 */
import type { Diagnostic } from './diagnostics'
import { derivativeHead, derivativeName } from './leibniz'
import { stripComment } from './line-scanner'
import { parseSheet } from './parser'
import { parseUnit, sameDims, type UnitInfo } from './units'
import type { ParsedModel } from './model'

export type ResolvePart = (handle: string, version: number) => string | null

export interface PartRef { handle: string; version: number }
export interface PartUse extends PartRef {
  name: string
  line: number
  description: string
  /** the part's inputs and outputs with their units (filled once the part is read) */
  inputs: { name: string; unit: string }[]
  outputs: { name: string; unit: string }[]
}

export interface FlattenResult {
  /** the flat sheet (the input itself when it uses no part) */
  text: string
  /** the parts this sheet declares, in order */
  direct: PartUse[]
  /** every part version used, directly or inside other parts (unique, in order of first use) */
  used: PartRef[]
  /** problems found while flattening, at host lines */
  diagnostics: Diagnostic[]
  /** maps a line of the flat text beyond the host's own lines to the host line and part name */
  origin(line: number): { line: number; part: string } | null
  hostLines: number
}

export const MAX_PART_DEPTH = 16
const PART_RE = /^\s*part\s+([A-Za-z_][A-Za-z0-9_]*)\s*=\s*([A-Za-z0-9][A-Za-z0-9_-]*)@(\d+)\s*(?:"([^"]*)")?\s*$/
const PART_HEAD_RE = /^\s*part\b/
const FEED_RE = /^\s*feed\s+([A-Za-z_][A-Za-z0-9_]*)\.([A-Za-z_][A-Za-z0-9_]*(?:\[\d+\])?)\s*=\s*(.*)$/
const FEED_HEAD_RE = /^\s*feed\b/
const OVERRIDE_RE = /^\s*(param|const|state|input)\s+([A-Za-z_][A-Za-z0-9_]*)\.([A-Za-z_][A-Za-z0-9_.]*(?:\[\d+\])?)\s*=/
const NAME_RE = /(?<![A-Za-z0-9_])[A-Za-z_][A-Za-z0-9_]*(?:\.[A-Za-z_][A-Za-z0-9_]*)*/g

/** Does the sheet declare parts? (cheap: no parsing) */
export function usesParts(text: string): boolean {
  return /^\s*part\b/m.test(text)
}

/** The parts a sheet declares (handle and version), without resolving them. */
export function partRefs(text: string): PartRef[] {
  const out: PartRef[] = []
  for (const raw of text.split(/\r\n|\n|\r/)) {
    const m = PART_RE.exec(stripComment(raw))
    if (m) out.push({ handle: m[2], version: Number(m[3]) })
  }
  return out
}

/**
 * The sheet with some parts pinned to other versions (`pins`: part name -> version); only the
 * version number of each matching `part` line changes, the rest of the text stays as written.
 */
export function repinParts(text: string, pins: ReadonlyMap<string, number>): string {
  const lines = text.split(/(\r\n|\n|\r)/)
  for (let i = 0; i < lines.length; i += 2) {
    const code = stripComment(lines[i])
    const m = PART_RE.exec(code)
    if (!m || !pins.has(m[1])) continue
    const at = code.indexOf(`@${m[3]}`, code.indexOf(m[2], code.indexOf('=')))
    lines[i] = lines[i].slice(0, at + 1) + String(pins.get(m[1])) + lines[i].slice(at + 1 + m[3].length)
  }
  return lines.join('')
}

/**
 * A resolver over part texts keyed `handle@version`; undefined when no texts were given (no library
 * at all). An empty record is a library without those parts: the flattener names what is missing.
 */
export function partsResolver(texts: Record<string, string> | undefined): ResolvePart | undefined {
  if (!texts) return undefined
  return (h, v) => (Object.prototype.hasOwnProperty.call(texts, `${h}@${v}`) ? texts[`${h}@${v}`] : null)
}

/**
 * Fetch the texts of every part a sheet needs (recursively, each version once) through `load`,
 * keyed `handle@version`: plain data that can travel to a worker thread or over HTTP. Parts the
 * loader does not find are left out.
 */
export async function loadPartTexts(text: string, load: (handle: string, version: number) => Promise<string | null>): Promise<Record<string, string>> {
  const out: Record<string, string> = {}
  const tried = new Set<string>()
  const queue = partRefs(text)
  for (let n = 0; queue.length && n < 10_000; n++) {
    const r = queue.shift()!
    const key = `${r.handle}@${r.version}`
    if (tried.has(key)) continue
    tried.add(key)
    const t = await load(r.handle, r.version)
    if (t === null) continue
    out[key] = t
    queue.push(...partRefs(t))
  }
  return out
}

/** Fetch every part a sheet needs (loadPartTexts) and return a resolver over them. */
export async function loadParts(text: string, load: (handle: string, version: number) => Promise<string | null>): Promise<ResolvePart> {
  return partsResolver(await loadPartTexts(text, load))!
}

interface Binding { expr: string; line: number }
interface Override { kind: string; line: number; unit: string | null; code: string }

/**
 * Flatten a sheet's parts. `chain` holds the parts being flattened around this one (cycle check).
 * Never throws.
 */
export function flattenSheet(text: string, resolve: ResolvePart | null, chain: string[] = []): FlattenResult {
  const lines = text.split(/\r\n|\n|\r/)
  const diagnostics: Diagnostic[] = []
  const direct: PartUse[] = []
  const used: PartRef[] = []
  const usedKeys = new Set<string>()
  const note = (r: PartRef) => { const k = `${r.handle}@${r.version}`; if (!usedKeys.has(k)) { usedKeys.add(k); used.push(r) } }
  const err = (line: number, message: string, column = 1, endColumn = (lines[line - 1]?.length ?? 0) + 1) =>
    diagnostics.push({ line, column, endColumn: Math.max(endColumn, column + 1), severity: 'error', message })
  const none: FlattenResult = { text, direct, used, diagnostics, origin: () => null, hostLines: lines.length }
  if (!usesParts(text) && !/^\s*feed\b/m.test(text)) return none

  // ---- the host's part, feed and override lines
  const feeds = new Map<string, Map<string, Binding>>()
  const overrides = new Map<string, Map<string, Override>>()
  const out = [...lines]
  lines.forEach((raw, i) => {
    const code = stripComment(raw)
    if (PART_HEAD_RE.test(code)) {
      const m = PART_RE.exec(code)
      if (!m) { err(i + 1, 'a part is declared as: part NAME = HANDLE@VERSION "description" (e.g. part upper = gravity-tank@3)'); return }
      if (direct.some((p) => p.name === m[1])) { err(i + 1, `duplicate part '${m[1]}'`); return }
      direct.push({ name: m[1], handle: m[2], version: Number(m[3]), line: i + 1, description: m[4] ?? '', inputs: [], outputs: [] })
      out[i] = ''
    } else if (FEED_HEAD_RE.test(code)) {
      const m = FEED_RE.exec(code)
      if (!m || m[3].trim() === '') { err(i + 1, 'a feed binds a part input to an expression: feed PART.INPUT = expression'); return }
      const f = feeds.get(m[1]) ?? new Map<string, Binding>()
      if (f.has(m[2])) { err(i + 1, `second feed for ${m[1]}.${m[2]} (the first is at line ${f.get(m[2])!.line})`); return }
      f.set(m[2], { expr: m[3].trim(), line: i + 1 })
      feeds.set(m[1], f)
      out[i] = ''
    } else {
      const m = OVERRIDE_RE.exec(code)
      if (!m) return
      const u = /=\s*\S+\s*\[([^\]]*)\]/.exec(code)
      const o = overrides.get(m[2]) ?? new Map()
      o.set(m[3], { kind: m[1], line: i + 1, unit: u ? u[1].trim() : null, code })
      overrides.set(m[2], o)
      // the override takes the place of the part's own declaration (keeps the part's order)
      if (direct.some((d) => d.name === m[2])) out[i] = ''
    }
  })
  for (const [p, f] of feeds) if (!direct.some((d) => d.name === p)) for (const b of f.values()) err(b.line, `feed ${p}.…: there is no part named '${p}' (declare part ${p} = HANDLE@VERSION)`)
  for (const [p, o] of overrides) if (!direct.some((d) => d.name === p)) for (const v of o.values()) err(v.line, `${p}.…: there is no part named '${p}' (qualified names belong to parts)`)

  const host = hostTiming(lines)
  const origins: { from: number; to: number; line: number; part: string }[] = []
  const tail: string[] = []
  for (const part of direct) {
    const key = `${part.handle}@${part.version}`
    note(part)
    if (chain.includes(key) || chain.length >= MAX_PART_DEPTH) {
      err(part.line, chain.includes(key) ? `part cycle: ${[...chain, key].slice(chain.indexOf(key)).join(' -> ')}` : `parts are nested too deeply (more than ${MAX_PART_DEPTH} levels)`)
      continue
    }
    const src = resolve ? resolve(part.handle, part.version) : null
    if (src === null) {
      err(part.line, resolve ? `part ${part.name}: no model '${part.handle}' version ${part.version} in the library` : `part ${part.name}: no library to take '${key}' from`)
      continue
    }
    // the part's own parts first
    const inner = flattenSheet(src, resolve, [...chain, key])
    inner.used.forEach(note)
    const innerErr = inner.diagnostics.find((d) => d.severity === 'error')
    if (innerErr) { err(part.line, innerErr.message.startsWith('part cycle') ? innerErr.message : `part ${part.name} (${key}), line ${innerErr.line}: ${innerErr.message}`); continue }
    const pm = parseSheet(inner.text, { qualified: inner.direct.length > 0 })
    if (!pm.model) {
      const e = pm.diagnostics.find((d) => d.severity === 'error')
      err(part.line, `part ${part.name} (${key}) has errors: line ${e?.line ?? 1}: ${e?.message ?? 'unreadable'}`)
      continue
    }
    const m = pm.model
    part.inputs = m.inputs.map((u) => ({ name: u.name, unit: u.unit?.text ?? '' }))
    part.outputs = m.outputs.map((o) => ({ name: o.name, unit: o.unit?.text ?? '' }))
    if (!sameTiming(host, m)) {
      err(part.line, `part ${part.name} (${key}) is ${m.kind === 'discrete' ? `discrete-time (sample ${m.sampleTime} ${m.timeUnit})` : 'continuous'} in [${m.timeUnit}], this sheet is ${host.discrete ? 'discrete-time' : 'continuous'} in [${host.timeUnit}]: parts must share the time unit and kind`)
      continue
    }
    const from = lines.length + tail.length + 1
    const r = rewritePart(inner.text, m, part, feeds.get(part.name) ?? new Map(), overrides.get(part.name) ?? new Map(), err)
    if (!r) continue
    tail.push(`# ---- part ${part.name} = ${key}`, ...r.lines)
    origins.push({ from, to: from + r.lines.length + 1, line: part.line, part: part.name })
    for (const b of r.bindings) origins.push({ from: from + 1 + b.at, to: from + 2 + b.at, line: b.line, part: part.name })
  }
  const flat = [...out, ...tail].join('\n')
  const hostLines = lines.length
  const origin = (line: number) => {
    if (line <= hostLines) return null
    // the innermost (narrowest) range wins: binding lines map to their feed line
    let best: { line: number; part: string } | null = null
    let width = Infinity
    for (const o of origins) if (line >= o.from && line < o.to && o.to - o.from < width) { best = { line: o.line, part: o.part }; width = o.to - o.from }
    return best
  }
  return { text: flat, direct, used, diagnostics, origin, hostLines }
}

interface Timing { timeUnit: string; discrete: boolean; sampleSeconds: number | null }
const SECONDS: Record<string, number> = { s: 1, min: 60, h: 3600 }

function hostTiming(lines: string[]): Timing {
  let timeUnit = 's', sample: number | null = null
  for (const raw of lines) {
    const code = stripComment(raw)
    const t = /^\s*time\s*\[\s*(s|min|h)\s*\]/.exec(code)
    if (t) timeUnit = t[1]
    const s = /^\s*sample\s+([0-9.eE+-]+)\s*(?:\[\s*(s|min|h)\s*\])?/.exec(code)
    if (s) sample = Number(s[1]) * (s[2] ? SECONDS[s[2]] : NaN)
  }
  if (sample !== null && Number.isNaN(sample)) {
    // a sample time without unit is in the sheet's time unit
    for (const raw of lines) { const s = /^\s*sample\s+([0-9.eE+-]+)/.exec(stripComment(raw)); if (s) sample = Number(s[1]) * SECONDS[timeUnit] }
  }
  return { timeUnit, discrete: sample !== null, sampleSeconds: sample }
}

function sameTiming(h: Timing, m: ParsedModel): boolean {
  if (h.timeUnit !== m.timeUnit) return false
  if (h.discrete !== (m.kind === 'discrete')) return false
  if (!h.discrete) return true
  return Math.abs(h.sampleSeconds! - m.sampleTime! * m.secondsPerTimeUnit) <= 1e-9 * h.sampleSeconds!
}

/** the part's statements under its name; null after reporting */
function rewritePart(
  text: string, m: ParsedModel, part: PartUse, feeds: Map<string, Binding>,
  overrides: Map<string, Override>,
  err: (line: number, message: string) => void,
): { lines: string[]; bindings: { at: number; line: number }[] } | null {
  const P = part.name
  const kinds = new Map<string, { kind: string; unit: UnitInfo | null }>()
  const add = (list: { name: string; unit: UnitInfo | null }[], kind: string) => list.forEach((d) => kinds.set(d.name, { kind, unit: d.unit }))
  add(m.states, 'state'); add(m.params, 'param'); add(m.consts, 'const'); add(m.inputs, 'input'); add(m.lookups, 'lookup'); add(m.lets, 'let'); add(m.modes, 'mode')
  const bases = new Set<string>()
  for (const k of kinds.keys()) bases.add(k.replace(/\[\d+\]$/, ''))
  const outputNames = new Set(m.outputs.map((o) => o.name))
  let ok = true
  for (const [name, b] of feeds) {
    const k = kinds.get(name)
    if (!k || k.kind !== 'input') {
      err(b.line, `feed ${P}.${name}: part ${P} (${part.handle}@${part.version}) has no input '${name}'${k ? ` ('${name}' is a ${k.kind})` : ''}; its inputs: ${m.inputs.map((u) => u.name).join(', ') || 'none'}`)
      ok = false
    }
  }
  for (const [name, o] of overrides) {
    const k = kinds.get(name)
    if (!k || k.kind === 'let' || k.kind === 'lookup') {
      err(o.line, `${o.kind} ${P}.${name}: part ${P} has no param, const, state or input '${name}'`)
      ok = false
      continue
    }
    if (k.kind !== o.kind) { err(o.line, `${P}.${name} is a ${k.kind} of the part: override it with ${k.kind} ${P}.${name} = …`); ok = false; continue }
    if (feeds.has(name)) { err(o.line, `${P}.${name} is fed by the host: it cannot also be redeclared`); ok = false; continue }
    if (k.unit && o.unit !== null) {
      const u = parseUnit(o.unit)
      if (u.ok && !sameDims(u.unit.dims, k.unit.dims)) { err(o.line, `${P}.${name} is in ${k.unit.text || '1'} in the part; [${o.unit}] has other dimensions`); ok = false }
    }
  }
  if (!ok) return null
  const prefix = (code: string) => prefixNames(code, (n) => bases.has(n) || kinds.has(n) || outputNames.has(n), P)
  const out: string[] = []
  const bindings: { at: number; line: number }[] = []
  const src = text.split(/\r\n|\n|\r/)
  let inLookup = false
  for (const raw of src) {
    const code = stripComment(raw)
    if (inLookup) { out.push(code); if (code.includes('}')) inLookup = false; continue }
    const head = /^\s*([A-Za-z_][A-Za-z0-9_]*)/.exec(code)?.[1] ?? ''
    const declared = /^\s*(?:param|const|state|input|lookup|let)\s+([A-Za-z_][A-Za-z0-9_.]*)/.exec(code)?.[1]
    if (head === 'model' || head === 'time' || head === 'sample' || code.trim() === '') { out.push(''); continue }
    if (head === 'input' && declared && feeds.has(declared)) {
      const unit = m.inputs.find((u) => u.name === declared)?.unit
      bindings.push({ at: out.length, line: feeds.get(declared)!.line })
      out.push(`let ${P}.${declared} = (${feeds.get(declared)!.expr})${unit ? ` [${unit.text}]` : ''}`)
      continue
    }
    if (declared && overrides.has(declared)) {
      const o = overrides.get(declared)!
      bindings.push({ at: out.length, line: o.line })
      out.push(o.code)
      continue
    }
    if (head === 'lookup' && code.includes('{') && !code.includes('}')) inLookup = true
    if (head === 'output') {
      const o = /^\s*output\s+([A-Za-z_][A-Za-z0-9_]*)\s*=/.exec(code)
      const decl = o ? m.outputs.find((x) => x.name === o[1]) : undefined
      if (!o || !decl) { out.push(''); continue }
      if (kinds.has(decl.name)) {
        // `output h = h`: reading part.h already gives the symbol
        if (decl.text.trim() === decl.name) { out.push(''); continue }
        err(part.line, `part ${P}: its output '${decl.name}' has the name of its ${kinds.get(decl.name)!.kind}; rename one of them in the part`)
        return null
      }
      out.push(`let ${P}.${decl.name} = ${prefix(decl.text)}${decl.unit ? ` [${decl.unit.text}]` : ''}${decl.description ? ` "${decl.description}"` : ''}`)
      continue
    }
    const dh = derivativeHead(code)
    if (dh) {
      // the part's state under its name, in the form that takes a qualified name: d(P.h)/dt
      out.push(`${code.slice(0, code.length - code.trimStart().length)}${derivativeName(prefix(dh.name + dh.index))}${prefix(code.slice(dh.end))}`)
      continue
    }
    out.push(prefix(code))
  }
  return { lines: out, bindings }
}

/**
 * Prefix the names `isLocal` accepts with `P.`, outside descriptions ("…") and unit brackets (a
 * `[` not directly after a name or `]`); index brackets `T[i-1]` are rewritten too.
 */
export function prefixNames(code: string, isLocal: (name: string) => boolean, P: string): string {
  let res = ''
  let i = 0
  while (i < code.length) {
    const ch = code[i]
    if (ch === '"') {
      const close = code.indexOf('"', i + 1)
      const end = close < 0 ? code.length : close + 1
      res += code.slice(i, end); i = end; continue
    }
    if (ch === '[' && !(i > 0 && /[A-Za-z0-9_\]]/.test(code[i - 1]))) {
      const close = code.indexOf(']', i)
      const end = close < 0 ? code.length : close + 1
      res += code.slice(i, end); i = end; continue
    }
    let j = i
    while (j < code.length && code[j] !== '"' && !(code[j] === '[' && !(j > 0 && /[A-Za-z0-9_\]]/.test(code[j - 1])))) j++
    res += code.slice(i, j).replace(NAME_RE, (n, off: number, whole: string) => {
      // not after a single '.' (the member of a qualified name); after '..' (a range) it is a name
      if (off > 0 && whole[off - 1] === '.' && !(off > 1 && whole[off - 2] === '.')) return n
      return isLocal(n) ? `${P}.${n}` : n
    })
    i = j
  }
  return res
}

/** Map diagnostics of a flat text back to the host's lines. */
export function mapDiagnostics(f: FlattenResult, diags: Diagnostic[]): Diagnostic[] {
  const out: Diagnostic[] = [...f.diagnostics]
  const seen = new Set<string>()
  for (const d of diags) {
    const o = f.origin(d.line)
    if (!o) { if (d.line <= f.hostLines) out.push(d); continue }
    const msg = `part ${o.part}: ${d.message}`
    const key = `${o.line}|${msg}`
    if (seen.has(key)) continue
    seen.add(key)
    // a fix names a place inside the part's text: it does not apply at the part line
    const { fix: _inside, ...rest } = d
    out.push({ ...rest, line: o.line, column: 1, endColumn: 2, message: msg })
  }
  return out.sort((a, b) => a.line - b.line || a.column - b.column)
}

/**
 * The sheet language in Monaco: a Monarch tokenizer (keywords, modifiers, numbers, units in
 * brackets, comments, strings, functions), a light theme in Pewter's colours, and hover and
 * completion providers that read the declared names of each open sheet from `sheetSymbols`.
 *
 * Declared names are found by a line scan that works on sheets with errors too (the parser's full
 * result is added when the sheet checks: values and bounds).
 */
import type * as Monaco from 'monaco-editor/editor'
import { FUNCTIONS } from '@shared/sheet/ast'
import type { CheckReply } from '@shared/api/models'
import type { PartCatalogueEntry } from '@shared/api/parts'
import { stripComment } from '@shared/sheet/line-scanner'
import { derivativeHead, derivativeName } from '@shared/sheet/leibniz'

export { stripComment }

export const SHEET_LANGUAGE = 'pewter-sheet'
export const SHEET_THEME = 'pewter-light'

export const SHEET_KEYWORDS = ['model', 'time', 'sample', 'input', 'param', 'const', 'lookup', 'state', 'let', 'next', 'output', 'part', 'feed', 'mode', 'event'] as const
/** the words of an event line (`event A falls below B then m = on`) and a mode's positions */
export const EVENT_WORDS = ['falls', 'below', 'rises', 'above', 'crosses', 'then'] as const
export const MODE_POSITIONS = ['off', 'on', 'closed', 'open'] as const
export const SHEET_MODIFIERS = ['in', 'fixed', 'estimate', 'steady', 'linear', 'hold', 'sigma'] as const
const BUILTINS = ['delay', 't', 'pi', 'e']
const REDUCERS = ['sum', 'prod']

export type SymbolKind = 'input' | 'param' | 'const' | 'lookup' | 'state' | 'let' | 'output' | 'part' | 'mode'

export interface SheetSymbol {
  name: string
  kind: SymbolKind
  unit: string
  description: string
  /** 1-based line of the declaration */
  line: number
  /** from the parsed summary when the sheet checks */
  value?: number | null
  lower?: number | null
  upper?: number | null
  fixed?: boolean
  /** indexed declarations: the range as written (`1..N`) */
  range?: string
  /** parts: the library model and version, and (when the sheet checks) its inputs and outputs */
  part?: { handle: string; version: number; title?: string; inputs?: { name: string; unit: string }[]; outputs?: { name: string; unit: string }[] }
}

const DECL_RE = /^\s*(input|param|const|lookup|state|let|output|mode)\s+([A-Za-z_][A-Za-z0-9_]*)(?:\[([^\]]*)\])?/
const PART_DECL_RE = /^\s*part\s+([A-Za-z_][A-Za-z0-9_]*)\s*=\s*([A-Za-z0-9][A-Za-z0-9_-]*)@(\d+)\s*(?:"([^"]*)")?/

/** Declared names of a sheet, by a line scan (works on sheets with errors), enriched by a check's summary. */
export function scanSymbols(text: string, check?: CheckReply | null): SheetSymbol[] {
  const out: SheetSymbol[] = []
  text.split(/\r?\n/).forEach((raw, i) => {
    const line = stripComment(raw)
    const pm = PART_DECL_RE.exec(line)
    if (pm) {
      out.push({ name: pm[1], kind: 'part', unit: '', description: pm[4] ?? '', line: i + 1, part: { handle: pm[2], version: Number(pm[3]) } })
      return
    }
    const m = DECL_RE.exec(line)
    if (!m) return
    const rest = line.slice(m[0].length)
    const unit = /\[([^\]]*)\]/.exec(rest)?.[1]?.trim() ?? ''
    const strings = [...rest.matchAll(/"([^"]*)"/g)]
    const description = strings.length ? strings[strings.length - 1][1] : ''
    out.push({ name: m[2], kind: m[1] as SymbolKind, unit, description, line: i + 1, ...(m[3] !== undefined ? { range: m[3].replace(/^\s*[A-Za-z_]\w*\s+in\s+/, '').trim() } : {}) })
  })
  const s = check?.summary
  if (s) {
    for (const sym of out) {
      if (sym.kind === 'param') {
        const p = s.parameters.find((x) => x.name === sym.name)
        if (p) Object.assign(sym, { value: p.value ?? null, lower: p.lower ?? null, upper: p.upper ?? null, fixed: p.fixed, unit: p.unit || sym.unit })
      } else if (sym.kind === 'state') {
        const x = s.states.find((v) => v.name === sym.name) as { initial?: number; lower?: number | null; upper?: number | null } | undefined
        if (x) Object.assign(sym, { value: x.initial ?? null, lower: x.lower ?? null, upper: x.upper ?? null })
      } else if (sym.kind === 'part') {
        const p = s.parts?.find((v) => v.name === sym.name)
        if (p && sym.part) Object.assign(sym.part, { inputs: p.inputs, outputs: p.outputs })
      } else if (sym.kind === 'mode') {
        const m = s.modes?.find((v) => v.name === sym.name)
        if (m) sym.value = m.initial
      } else if (sym.kind === 'input') {
        const u = s.inputs.find((v) => v.name === sym.name) as { value?: number } | undefined
        if (u) sym.value = u.value ?? null
      }
    }
  }
  return out
}

/** The symbols of each open sheet, by the Monaco model's URI (set by SheetEditor). */
export const sheetSymbols = new Map<string, SheetSymbol[]>()

/** The workspace library's models as part handles, by the Monaco model's URI (set by SheetEditor). */
export const sheetPartHandles = new Map<string, PartCatalogueEntry[]>()

/** After `part NAME = ` (the handle being typed): the text typed so far, else null. */
export function partHandlePrefix(lineBeforeCursor: string): string | null {
  const m = /^\s*part\s+[A-Za-z_][A-Za-z0-9_]*\s*=\s*([A-Za-z0-9_-]*)$/.exec(lineBeforeCursor)
  return m ? m[1] : null
}

/** Completion entries for a part handle: `handle@version`, the newest approved version first, else the latest. */
export function partHandleItems(entries: PartCatalogueEntry[], typed: string): { label: string; insert: string; detail: string }[] {
  const t = typed.toLowerCase()
  return entries.filter((e) => e.handle.toLowerCase().startsWith(t) || e.title.toLowerCase().includes(t)).map((e) => {
    const v = e.latestApproved ?? e.latest
    return {
      label: `${e.handle}@${v}`, insert: `${e.handle}@${v}`,
      detail: `${e.title} — ${e.latestApproved !== null ? `version ${v}, approved` : `version ${v}, not reviewed`}${e.latestApproved !== null && e.latest > e.latestApproved ? ` (latest ${e.latest})` : ''}`,
    }
  })
}

const kindLabel: Record<SymbolKind, string> = {
  input: 'input', param: 'parameter', const: 'constant', lookup: 'lookup', state: 'state', let: 'intermediate (let)', output: 'output', part: 'part', mode: 'mode (switch position, set by events)',
}

/** hover help of the event words */
export const EVENT_HELP: Record<string, string> = {
  event: 'event A falls below B then x = …, m = on — where A − B crosses zero (located on the solver\'s dense output), the assignments happen at once, all reading the values just before the event',
  falls: 'A falls below B — fires where A − B goes from above zero to zero or below',
  rises: 'A rises above B — fires where A − B goes from below zero to zero or above',
  crosses: 'A crosses B — fires where A − B changes sign either way',
  then: 'then x = …, m = on — what the event sets: states (to expressions of the values before the event) and modes (to positions)',
  mode: 'mode m = off — a switch position the equations read as a number (off/closed 0, on/open 1, or a whole number); only events change it',
}

const DERIVATIVE_HELP = 'dx/dt = … — the derivative of the state x with respect to the time t, written at the head of its line (on a right side dx/dt is a division)'

const fmt = (v: number) => (Math.abs(v) >= 1e5 || (Math.abs(v) < 1e-3 && v !== 0) ? v.toExponential(3).replace(/\.?0+e/, 'e') : String(Number(v.toPrecision(6))))

/** Markdown shown when hovering a declared name. */
export function describeSymbol(s: SheetSymbol): string {
  if (s.part) {
    const lines = [`**${s.name}** — part: library model **${s.part.handle}**${s.part.title ? ` (${s.part.title})` : ''}, pinned at version ${s.part.version}`]
    if (s.description) lines.push(s.description)
    const list = (xs: { name: string; unit: string }[]) => xs.map((x) => `${s.name}.${x.name}${x.unit ? ` [${x.unit}]` : ''}`).join(', ') || 'none'
    if (s.part.inputs) lines.push(`inputs (feed ${s.name}.…): ${list(s.part.inputs)}`)
    if (s.part.outputs) lines.push(`outputs: ${list(s.part.outputs)}`)
    lines.push(`declared on line ${s.line}`)
    return lines.join('\n\n')
  }
  const parts = [`**${s.name}${s.range ? `[${s.range}]` : ''}** — ${s.range ? 'indexed ' : ''}${kindLabel[s.kind]}${s.unit ? ` [${s.unit}]` : ''}`]
  if (s.description) parts.push(s.description)
  if (s.range) parts.push(`one ${kindLabel[s.kind]} per index ${s.range}: write ${s.name}[i]`)
  const facts: string[] = []
  if (s.value !== undefined && s.value !== null) facts.push(`${s.kind === 'state' ? 'initial value' : 'value'} ${fmt(s.value)}${s.unit ? ` ${s.unit}` : ''}`)
  if (s.kind === 'mode' && facts.length) facts[0] = `starts at ${s.value === 0 ? 'off/closed (0)' : s.value === 1 ? 'on/open (1)' : `position ${s.value}`}`
  if (s.kind === 'param' && s.fixed) facts.push('fixed')
  if ((s.lower ?? null) !== null || (s.upper ?? null) !== null) facts.push(`bounds [${s.lower === null || s.lower === undefined ? '−∞' : fmt(s.lower)}, ${s.upper === null || s.upper === undefined ? '∞' : fmt(s.upper)}]`)
  if (facts.length) parts.push(facts.join(' · '))
  parts.push(`declared on line ${s.line}`)
  return parts.join('\n\n')
}

const FUNCTION_HELP: Record<string, string> = {
  atan2: 'atan2(y, x) — angle of the point (x, y)', pow: 'pow(a, b) — a to the power b', min: 'min(a, b, …)', max: 'max(a, b, …)',
  hypot: 'hypot(a, b, …) — square root of the sum of squares', delay: 'delay(input, tau) — the input trace read at t − tau (tau ≥ 0, a param or const)',
  sum: 'sum(i in 1..N, expression of i) — the sum over an index range', prod: 'prod(i in 1..N, expression of i) — the product over an index range',
  log: 'log(x) — natural logarithm', log10: 'log10(x) — base-10 logarithm', sign: 'sign(x) — −1, 0 or 1',
  soft_step: 'soft_step(x, at, width) — smooth 0 → 1 around at (0.12 to 0.88 over width); a fit can move at',
  soft_switch: 'soft_switch(x, at, width, below, above) — smooth form of x >= at ? above : below',
  soft_max: 'soft_max(a, b, width) — smooth max, at most width/2 above it',
  soft_min: 'soft_min(a, b, width) — smooth min, at most width/2 below it',
  soft_clamp: 'soft_clamp(x, lo, hi, width) — soft limit of x between lo and hi',
}

let registered = false

export function registerSheetLanguage(monaco: typeof Monaco): void {
  if (registered) return
  registered = true
  monaco.languages.register({ id: SHEET_LANGUAGE, extensions: ['.sheet'], aliases: ['Pewter sheet'] })
  monaco.languages.setLanguageConfiguration(SHEET_LANGUAGE, {
    comments: { lineComment: '#' },
    brackets: [['(', ')'], ['[', ']'], ['{', '}']],
    autoClosingPairs: [{ open: '(', close: ')' }, { open: '[', close: ']' }, { open: '{', close: '}' }, { open: '"', close: '"' }],
    wordPattern: /[A-Za-z_][A-Za-z0-9_]*(?:\.[A-Za-z_][A-Za-z0-9_]*)*|-?\d*\.?\d+(?:[eE][+-]?\d+)?/,
  })
  monaco.languages.setMonarchTokensProvider(SHEET_LANGUAGE, {
    keywords: [...SHEET_KEYWORDS],
    modifiers: [...SHEET_MODIFIERS],
    functions: [...FUNCTIONS, 'delay'],
    builtins: ['t', 'pi', 'e', ...MODE_POSITIONS],
    eventWords: [...EVENT_WORDS],
    tokenizer: {
      root: [
        [/#.*$/, 'comment'],
        [/"[^"]*"/, 'string'],
        [/"[^"]*$/, 'string.invalid'],
        [/\[/, { token: 'unit.bracket', next: '@unit' }],
        // dh/dt = …, dT[i in 2..N]/dt = …, d(h)/dt = … (only before '='; elsewhere it is a division)
        [/d(?:\([A-Za-z_][\w.]*(?:\[[^\]]*\])?\)|[A-Za-z_]\w*(?:\[[^\]]*\])?)\s*\/\s*dt(?![\w.])(?=\s*=(?!=))/, 'derivative'],
        // the older form h' = … (read with a warning)
        [/[A-Za-z_][A-Za-z0-9_]*(?:\[[^\]]*\])?'/, 'derivative.older'],
        [/[A-Za-z_][A-Za-z0-9_]*(?=\s*\()/, { cases: { '@functions': 'predefined', '@default': 'identifier' } }],
        [/[A-Za-z_][A-Za-z0-9_]*/, { cases: { '@keywords': 'keyword', '@modifiers': 'keyword.modifier', '@eventWords': 'keyword.modifier', '@builtins': 'constant', '@default': 'identifier' } }],
        [/(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?/, 'number'],
        [/->|[-+*/^=<>!?:]+/, 'operator'],
        [/[{}(),]/, 'delimiter'],
      ],
      // a unit, or the bounds after `in` (numbers inside brackets)
      unit: [
        [/\]/, { token: 'unit.bracket', next: '@pop' }],
        [/\s+/, 'white'],
        [/[-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?(?=\s*[,\]])/, 'number'],
        [/-?inf\b/, 'number'],
        [/,/, 'delimiter'],
        [/[^\],]+/, 'unit'],
      ],
    },
  } as Monaco.languages.IMonarchLanguage)

  monaco.editor.defineTheme(SHEET_THEME, {
    base: 'vs',
    inherit: true,
    rules: [
      { token: 'comment', foreground: '788181', fontStyle: 'italic' },
      { token: 'keyword', foreground: '125a55', fontStyle: 'bold' },
      { token: 'keyword.modifier', foreground: '17706a' },
      { token: 'number', foreground: '86560e' },
      { token: 'unit', foreground: '5c3f8a' },
      { token: 'unit.bracket', foreground: '8a7aa6' },
      { token: 'string', foreground: '3d7a4f' },
      { token: 'string.invalid', foreground: 'a8432f' },
      { token: 'predefined', foreground: '2a5d8a' },
      { token: 'constant', foreground: '2a5d8a' },
      { token: 'derivative', foreground: '0d4441', fontStyle: 'bold' },
      { token: 'derivative.older', foreground: '0d4441', fontStyle: 'italic' },
      { token: 'operator', foreground: '454d4f' },
    ],
    colors: {
      'editor.background': '#ffffff',
      'editorLineNumber.foreground': '#979f9e',
      'editorLineNumber.activeForeground': '#30373a',
      'editor.lineHighlightBackground': '#f4f5f4',
      'editorCursor.foreground': '#17706a',
      'editor.selectionBackground': '#d1e2e1',
    },
  })

  monaco.languages.registerHoverProvider(SHEET_LANGUAGE, {
    provideHover(model, position) {
      const word = model.getWordAtPosition(position)
      if (!word) return null
      const range = new monaco.Range(position.lineNumber, word.startColumn, position.lineNumber, word.endColumn)
      const syms = sheetSymbols.get(model.uri.toString()) ?? []
      const sym = syms.find((s) => s.name === word.word)
      if (sym?.part) {
        const entry = sheetPartHandles.get(model.uri.toString())?.find((e) => e.handle === sym.part!.handle)
        return { range, contents: [{ value: describeSymbol(entry ? { ...sym, part: { ...sym.part, title: entry.title } } : sym) }] }
      }
      if (sym) return { range, contents: [{ value: describeSymbol(sym) }] }
      const dot = word.word.indexOf('.')
      const owner = dot > 0 ? syms.find((s) => s.kind === 'part' && s.name === word.word.slice(0, dot)) : undefined
      if (owner?.part) {
        const member = word.word.slice(dot + 1)
        const io = owner.part.outputs?.find((o) => o.name === member) ? 'output' : owner.part.inputs?.find((o) => o.name === member) ? 'input' : 'symbol'
        const unit = [...(owner.part.outputs ?? []), ...(owner.part.inputs ?? [])].find((o) => o.name === member)?.unit
        return { range, contents: [{ value: `**${word.word}** — ${io} ${member}${unit ? ` [${unit}]` : ''} of part ${owner.name} (${owner.part.handle}@${owner.part.version})` }] }
      }
      if ((FUNCTIONS as readonly string[]).includes(word.word) || word.word === 'delay' || REDUCERS.includes(word.word)) {
        return { range, contents: [{ value: `**${word.word}** — function\n\n${FUNCTION_HELP[word.word] ?? `${word.word}(x)`}` }] }
      }
      const head = derivativeHead(model.getLineContent(position.lineNumber))
      if (head && !head.older && word.startColumn <= head.nameAt + 1 && word.endColumn > head.nameAt) {
        const state = syms.find((s) => s.kind === 'state' && s.name === head.name)
        return { range, contents: [{ value: `**${derivativeName(head.name + head.index)}** — the derivative of ${state ? 'the state ' : ''}${head.name}${head.index} with respect to the time t${state?.unit ? ` [${state.unit}/time unit]` : ''}` }] }
      }
      if (word.word in EVENT_HELP) return { range, contents: [{ value: `**${word.word}**\n\n${EVENT_HELP[word.word]}` }] }
      if (word.word === 't') return { range, contents: [{ value: '**t** — the time, in the sheet\'s time unit' }] }
      return null
    },
  })

  monaco.languages.registerCompletionItemProvider(SHEET_LANGUAGE, {
    provideCompletionItems(model, position) {
      const word = model.getWordUntilPosition(position)
      const range = new monaco.Range(position.lineNumber, word.startColumn, position.lineNumber, word.endColumn)
      const K = monaco.languages.CompletionItemKind
      // `part NAME = ` → the library's models as handle@version
      const typed = partHandlePrefix(model.getLineContent(position.lineNumber).slice(0, position.column - 1))
      if (typed !== null) {
        const from = position.column - typed.length
        const r = new monaco.Range(position.lineNumber, from, position.lineNumber, position.column)
        return {
          suggestions: partHandleItems(sheetPartHandles.get(model.uri.toString()) ?? [], typed)
            .map((it, i) => ({ label: it.label, kind: K.Module, insertText: it.insert, range: r, detail: it.detail, sortText: String(i).padStart(4, '0') })),
        }
      }
      const kindOf: Record<SymbolKind, Monaco.languages.CompletionItemKind> = {
        state: K.Variable, param: K.Constant, const: K.Constant, input: K.Field, lookup: K.Function, let: K.Variable, output: K.Value, part: K.Module, mode: K.EnumMember,
      }
      const seen = new Set<string>()
      const suggestions: Monaco.languages.CompletionItem[] = []
      for (const s of sheetSymbols.get(model.uri.toString()) ?? []) {
        if (s.kind === 'output' || seen.has(s.name)) continue
        seen.add(s.name)
        suggestions.push({
          label: s.name, kind: kindOf[s.kind], insertText: s.name, range, sortText: `0${s.name}`,
          detail: `${kindLabel[s.kind]}${s.unit ? ` [${s.unit}]` : ''}`, documentation: { value: describeSymbol(s) },
        })
        // a part's inputs and outputs under its name
        for (const io of [...(s.part?.outputs ?? []), ...(s.part?.inputs ?? [])]) {
          const q = `${s.name}.${io.name}`
          if (seen.has(q)) continue
          seen.add(q)
          suggestions.push({ label: q, kind: K.Field, insertText: q, range, sortText: `0${q}`, detail: `part ${s.name} (${s.part!.handle}@${s.part!.version})${io.unit ? ` [${io.unit}]` : ''}` })
        }
      }
      for (const f of [...FUNCTIONS, 'delay', ...REDUCERS]) {
        suggestions.push({
          label: f, kind: K.Function, insertText: `${f}($0)`, insertTextRules: monaco.languages.CompletionItemInsertTextRule.InsertAsSnippet,
          range, sortText: `1${f}`, detail: 'function', documentation: FUNCTION_HELP[f],
        })
      }
      for (const k of [...SHEET_KEYWORDS, ...SHEET_MODIFIERS, ...EVENT_WORDS]) suggestions.push({ label: k, kind: K.Keyword, insertText: k, range, sortText: `2${k}`, documentation: EVENT_HELP[k] })
      for (const k of MODE_POSITIONS) suggestions.push({ label: k, kind: K.EnumMember, insertText: k, range, sortText: `2${k}`, detail: 'mode position' })
      // a derivative line for each state (at the head of a line)
      for (const s of sheetSymbols.get(model.uri.toString()) ?? []) {
        if (s.kind !== 'state') continue
        const lhs = s.range ? `d${s.name}[\${1:i in ${s.range}}]/dt` : derivativeName(s.name)
        suggestions.push({
          label: `${s.range ? `d${s.name}[…]/dt` : derivativeName(s.name)} = …`, kind: K.Snippet, range, sortText: `3d${s.name}`,
          detail: `derivative of the state ${s.name}`, documentation: DERIVATIVE_HELP,
          insertText: `${lhs} = \${${s.range ? 2 : 1}:expression}`, insertTextRules: monaco.languages.CompletionItemInsertTextRule.InsertAsSnippet,
        })
      }
      suggestions.push({
        label: 'dx/dt = …', kind: K.Snippet, range, sortText: '3dx', detail: 'a derivative line', documentation: DERIVATIVE_HELP,
        insertText: 'd${1:x}/dt = ${2:expression}', insertTextRules: monaco.languages.CompletionItemInsertTextRule.InsertAsSnippet,
      })
      suggestions.push({
        label: 'event … then …', kind: K.Snippet, range, sortText: '3event', detail: 'an event line', documentation: EVENT_HELP.event,
        insertText: 'event ${1:x} ${2|falls below,rises above,crosses|} ${3:threshold} then ${4:target} = ${5:on}',
        insertTextRules: monaco.languages.CompletionItemInsertTextRule.InsertAsSnippet,
      })
      for (const b of BUILTINS.slice(1)) suggestions.push({ label: b, kind: K.Constant, insertText: b, range, sortText: `1${b}` })
      return { suggestions }
    },
  })
}

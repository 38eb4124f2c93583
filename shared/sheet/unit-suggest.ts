/**
 * Spelling help for units: the unit a sheet most likely meant when mathjs does not know the one
 * written (`kw` → kW, `degc` → degC, `s2` → s^2, `Nm` → N*m), and the `^` form of a power written
 * as a bare digit (`m3/s` → m^3/s). Candidates: the sheet's own units first, then a list of units
 * common in plant models, then every mathjs unit name with its short prefixes (mathjs.org, "Units").
 */
import { closest } from '../did-you-mean'
import { unitNames } from '../mathjs-lite'
import { parseUnit, sameDims } from './units'

/** units common in plant models (common practice, no source), tried before the full catalogue */
const PREFERRED = [
  's', 'min', 'h', 'ms', 'm', 'mm', 'cm', 'km', 'kg', 'g', 'mg', 't', 'K', 'degC', 'degF', 'W', 'kW', 'MW', 'J', 'kJ', 'MJ', 'Wh', 'kWh',
  'Pa', 'kPa', 'MPa', 'bar', 'mbar', 'N', 'kN', 'V', 'mV', 'kV', 'A', 'mA', 'ohm', 'kohm', 'mol', 'mmol', 'L', 'mL', 'Ah', 'Hz', 'rad',
  'F', 'uF', 'H', 'mH', 'C', 'S', 'T', 'Wb', 'rpm', 'deg',
].filter((u) => parseUnit(u).ok)

let bases: string[] | null = null
/** every mathjs unit name, without prefixes */
function baseNames(): string[] {
  bases ??= unitNames().map((u) => u.name)
  return bases
}

let catalogue: string[] | null = null
/** every mathjs unit name, and each with its short prefixes (`kW`, `mA`, …) */
function allUnits(): string[] {
  if (catalogue) return catalogue
  const out = new Set<string>(PREFERRED)
  for (const { name, prefixes } of unitNames()) {
    out.add(name)
    if (name.length <= 3) for (const p of prefixes) if (p.length === 1 && p !== '') out.add(p + name)
  }
  catalogue = [...out]
  return catalogue
}

const esc = (s: string) => s.replace(/[.*+?^${}()|[\]\\]/g, '\\$&')
function replaceWord(text: string, word: string, by: string): string {
  return text.replace(new RegExp(`(?<![A-Za-z0-9_])${esc(word)}(?![A-Za-z0-9_])`, 'g'), by)
}

/** The unit names of the units a sheet declares (its `[…]` texts that parse). */
export function sheetUnitNames(unitTexts: Iterable<string>): string[] {
  const out = new Set<string>()
  for (const t of unitTexts) {
    const r = parseUnit(t)
    if (r.ok) for (const k of Object.keys(r.unit.atoms ?? {})) if (k !== '%') out.add(k)
  }
  return [...out]
}

/** the known unit meant by one unknown unit name, or null */
function suggestName(name: string, own: readonly string[]): string | null {
  const pw = /^([A-Za-z]+)(\d)$/.exec(name)
  if (pw && parseUnit(pw[1]).ok) return `${pw[1]}^${pw[2]}`
  const lower = name.toLowerCase()
  const sameCase = (list: readonly string[]) => list.find((c) => c.toLowerCase() === lower) ?? null
  const preferred = [...own, ...PREFERRED]
  const base = baseNames()
  const hit = sameCase(preferred) ?? sameCase(base)
  if (hit) return hit
  // a plural (`bars`), or two units run together (`Nm` → N*m)
  if (name.length > 2 && name.endsWith('s') && preferred.includes(name.slice(0, -1))) return name.slice(0, -1)
  for (let i = 1; i < name.length; i++) {
    const a = name.slice(0, i), b = name.slice(i)
    if (preferred.includes(a) && preferred.includes(b)) return `${a}*${b}`
  }
  return sameCase(allUnits()) ?? closest(name, preferred) ?? (name.length >= 4 ? closest(name, base) : null)
}

/**
 * The whole unit text with its unknown names replaced by the likely ones, or null when there is
 * no confident guess. Checked: the result parses.
 */
export function suggestUnit(text: string, own: readonly string[] = []): string | null {
  let cur = text.trim()
  for (let round = 0; round < 4; round++) {
    const r = parseUnit(cur)
    if (r.ok) return cur === text.trim() ? null : cur
    if (!r.unknown) return null
    const by = suggestName(r.unknown, own)
    if (!by) return null
    const next = replaceWord(cur, r.unknown, by)
    if (next === cur) return null
    cur = next
  }
  return null
}

/** The message for a unit text that does not parse, and the replacement it suggests (or null). */
export function unknownUnitProblem(text: string, message: string, unknown: string | undefined, own: readonly string[] = []): { message: string; replacement: string | null } {
  if (unknown === undefined) return { message, replacement: null }
  const rep = suggestUnit(text, own)
  if (!rep) return { message, replacement: null }
  const what = unknown === text.trim() ? `'${unknown}'` : `'${unknown}' in '${text.trim()}'`
  return { message: `unknown unit ${what}; did you mean '${rep}'?`, replacement: rep }
}

/**
 * The `^` form of a unit that writes a power as a trailing digit (`m3/s` → `m^3/s`, `cm2` →
 * `cm^2`): mathjs reads those names as the power, but the sheet writes powers with `^`. Null when
 * there is nothing to rewrite.
 */
export function plainPowerForm(text: string): string | null {
  let changed = false
  const out = text.replace(/[A-Za-z_][A-Za-z0-9_]*/g, (tok) => {
    const m = /^([A-Za-z]+)([23])$/.exec(tok)
    if (!m) return tok
    const a = parseUnit(tok)
    const b = parseUnit(`${m[1]}^${m[2]}`)
    if (!a.ok || !b.ok || !sameDims(a.unit.dims, b.unit.dims) || Math.abs(a.unit.scale / b.unit.scale - 1) > 1e-12) return tok
    changed = true
    return `${m[1]}^${m[2]}`
  })
  return changed ? out : null
}

/**
 * Units of a sheet, read with mathjs's unit parser (mathjs.org, "Units" documentation).
 * A unit becomes a dimension vector over the SI base quantities plus the affine map to coherent
 * SI: internal = declared * scale + offset. The angle dimension is dropped (the radian is
 * dimensionless in SI: BIPM, "The International System of Units", 9th edition 2019, table 4).
 */
import { unit as mathUnit } from '../mathjs-lite'

/** mass, length, time, current, temperature, luminous intensity, amount, (angle dropped), bit */
export const N_DIMS = 9
const ANGLE = 7
const TIME = 2
const SI_SYMBOLS = ['kg', 'm', 's', 'A', 'K', 'cd', 'mol', 'rad', 'bit']

export type Dims = readonly number[]

export interface UnitInfo {
  /** the unit as written */
  text: string
  dims: Dims
  scale: number
  /** non-zero for an offset unit such as degC (allowed only on its own, for an absolute quantity) */
  offset: number
  /** the unit as a product of the unit names written, with their powers (`kW/m^2` → kW: 1, m: -2) */
  atoms?: Atoms
}

/** A unit as the sheet wrote it: each unit name (with its prefix) and its power. */
export type Atoms = Readonly<Record<string, number>>
const NO_ATOMS: Atoms = Object.freeze({})

export const DIMENSIONLESS: Dims = Object.freeze(new Array<number>(N_DIMS).fill(0))
export const TIME_DIMS: Dims = Object.freeze(DIMENSIONLESS.map((_, i) => (i === TIME ? 1 : 0)))

/** `unknown`: the unit name mathjs does not know (see unit-suggest.ts for a did-you-mean) */
export type UnitResult = { ok: true; unit: UnitInfo } | { ok: false; message: string; offsetInCompound?: boolean; unknown?: string }

const cache = new Map<string, UnitResult>()

/** Parse a unit text such as `m^3/s`, `J/(kg*K)`, `degC`, `1` or `%`. Never throws. */
export function parseUnit(text: string): UnitResult {
  const key = text.trim()
  const hit = cache.get(key)
  if (hit) return hit
  const r = parseUncached(key)
  if (cache.size > 2000) cache.clear()
  cache.set(key, r)
  return r
}

function parseUncached(text: string): UnitResult {
  if (text === '' || text === '1' || text === '-') return { ok: true, unit: { text, dims: DIMENSIONLESS, scale: 1, offset: 0, atoms: NO_ATOMS } }
  if (text === '%') return { ok: true, unit: { text, dims: DIMENSIONLESS, scale: 0.01, offset: 0, atoms: Object.freeze({ '%': 1 }) } }
  if (text.length > 200) return { ok: false, message: 'unit text is too long' }
  if (!/^[A-Za-z0-9_ .*/^()-]+$/.test(text)) return { ok: false, message: `unknown unit '${text}'` }
  try {
    const one = mathUnit(1, text) as unknown as MathUnitLike
    const zero = mathUnit(0, text) as unknown as MathUnitLike
    const si1 = (one.toSI() as unknown as MathUnitLike).value
    const si0 = (zero.toSI() as unknown as MathUnitLike).value
    const dims = one.dimensions.map((d, i) => (i === ANGLE ? 0 : d))
    const offsetParts = one.units.filter((u) => u.unit.offset !== 0)
    if (offsetParts.length > 0 && (one.units.length !== 1 || one.units[0].power !== 1)) {
      return { ok: false, message: `offset unit '${offsetParts[0].unit.name}' is allowed only on its own, for an absolute quantity: write K in compound units such as W/K`, offsetInCompound: true }
    }
    if (!Number.isFinite(si1) || !Number.isFinite(si0) || si1 - si0 === 0) return { ok: false, message: `unknown unit '${text}'` }
    const atoms: Record<string, number> = {}
    for (const u of one.units) {
      const name = (u.prefix?.name ?? '') + u.unit.name
      atoms[name] = (atoms[name] ?? 0) + u.power
    }
    return { ok: true, unit: { text, dims: Object.freeze(dims), scale: si1 - si0, offset: si0, atoms: Object.freeze(atoms) } }
  } catch (e) {
    const msg = e instanceof Error ? e.message : String(e)
    const m = /Unit "([^"]*)" not found/.exec(msg)
    if (m) return { ok: false, message: `unknown unit '${m[1]}'`, unknown: m[1] }
    return { ok: false, message: `unknown unit '${text}'` }
  }
}

interface MathUnitLike {
  value: number
  dimensions: number[]
  units: { unit: { name: string; offset: number }; prefix?: { name: string }; power: number }[]
  toSI(): unknown
}

export function sameDims(a: Dims, b: Dims): boolean {
  for (let i = 0; i < N_DIMS; i++) if (Math.abs(a[i] - b[i]) > 1e-9) return false
  return true
}
export function addDims(a: Dims, b: Dims, sign = 1): Dims {
  return a.map((v, i) => v + sign * b[i])
}
export function scaleDims(a: Dims, k: number): Dims {
  return a.map((v) => v * k)
}
export function isDimensionless(a: Dims): boolean {
  return a.every((v) => Math.abs(v) < 1e-9)
}

function fmtPow(p: number): string {
  const r = Math.round(p * 1000) / 1000
  return r === 1 ? '' : `^${r}`
}
/**
 * A unit written as the sheet wrote its parts, e.g. `V^1.5`, `kW/(m^2*K)`; `1` when nothing is
 * left. Names keep their order of first appearance; powers are rounded to 3 decimals.
 */
export function formatAtoms(a: Atoms): string {
  const num: string[] = []
  const den: string[] = []
  for (const [name, p] of Object.entries(a)) {
    if (Math.abs(p) < 1e-9) continue
    if (p > 0) num.push(name + fmtPow(p))
    else den.push(name + fmtPow(-p))
  }
  const n = num.length ? num.join('*') : '1'
  if (!den.length) return n
  return `${n}/${den.length > 1 ? '(' + den.join('*') + ')' : den[0]}`
}

/** Coherent SI form of a dimension vector, e.g. `kg*m^2/s^3`; `1` when dimensionless. */
export function formatDims(d: Dims): string {
  const a: Record<string, number> = {}
  for (let i = 0; i < N_DIMS; i++) a[SI_SYMBOLS[i]] = d[i]
  return formatAtoms(a)
}

export const SECONDS_PER: Record<'s' | 'min' | 'h', number> = { s: 1, min: 60, h: 3600 }

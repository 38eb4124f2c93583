/**
 * Unit conversion of measured columns: every conversion between two units is affine,
 * v_to = a·v_from + b (b ≠ 0 only for offset units such as degC, converted as absolute temperatures).
 * Both units are read by the sheet's own unit parser (shared/sheet/units.ts: mathjs units plus `%`, `1`
 * and `-`), so a trace file converts the same way in the command line as in an upload's binding.
 */
import { formatDims, parseUnit, sameDims } from '../sheet/units'

export interface Affine {
  a: number
  b: number
}

/** The affine map from one unit to another, or a message saying why it does not exist. */
export function unitConversion(from: string, to: string): { ok: true; map: Affine } | { ok: false; message: string } {
  const f = from.trim()
  const t = to.trim()
  if (f === t) return { ok: true, map: { a: 1, b: 0 } }
  const pf = parseUnit(f)
  if (!pf.ok) return { ok: false, message: pf.message }
  const pt = parseUnit(t)
  if (!pt.ok) return { ok: false, message: pt.message }
  if (!sameDims(pf.unit.dims, pt.unit.dims)) {
    return { ok: false, message: `cannot convert '${f}' (${formatDims(pf.unit.dims)}) to '${t}' (${formatDims(pt.unit.dims)})` }
  }
  // SI value = scale·v + offset on both sides
  const a = pf.unit.scale / pt.unit.scale
  const b = (pf.unit.offset - pt.unit.offset) / pt.unit.scale
  if (!Number.isFinite(a) || !Number.isFinite(b) || a === 0) return { ok: false, message: `cannot convert '${f}' to '${t}'` }
  return { ok: true, map: { a, b } }
}

/** Seconds in one of the given time unit, or null when it is not a unit of time. */
export function timeScaleSeconds(u: string): number | null {
  const r = unitConversion(u, 's')
  return r.ok && r.map.b === 0 && r.map.a > 0 ? r.map.a : null
}

/**
 * Unit conversion of measured columns with mathjs's unit system (mathjs.org, "Units"): every conversion
 * between two units is affine, v_to = a·v_from + b (b ≠ 0 only for offset units such as degC, which
 * are converted as absolute temperatures), so we ask mathjs twice and apply a and b in the loop.
 */
import { unit as mathUnit } from '../mathjs-lite'

export interface Affine {
  a: number
  b: number
}

const SAFE = /^[A-Za-z0-9_ .*/^()\-%]+$/

/** The affine map from one unit to another, or a message saying why it does not exist. */
export function unitConversion(from: string, to: string): { ok: true; map: Affine } | { ok: false; message: string } {
  const f = from.trim()
  const t = to.trim()
  if (f === t) return { ok: true, map: { a: 1, b: 0 } }
  if (!SAFE.test(f)) return { ok: false, message: `unknown unit '${f}'` }
  if (!SAFE.test(t)) return { ok: false, message: `unknown unit '${t}'` }
  try {
    const conv = (v: number) => (mathUnit(v, f) as unknown as { toNumber(u: string): number }).toNumber(t)
    const b = conv(0)
    const a = conv(1) - b
    if (!Number.isFinite(a) || !Number.isFinite(b) || a === 0) return { ok: false, message: `cannot convert '${f}' to '${t}'` }
    return { ok: true, map: { a, b } }
  } catch (e) {
    const msg = e instanceof Error ? e.message : String(e)
    if (/not found|unit/i.test(msg) && /not found/i.test(msg)) return { ok: false, message: `unknown unit '${/"(.+?)"/.exec(msg)?.[1] ?? f}'` }
    return { ok: false, message: `cannot convert '${f}' to '${t}' (${msg})` }
  }
}

/** Seconds in one of the given time unit, or null when it is not a unit of time. */
export function timeScaleSeconds(u: string): number | null {
  const r = unitConversion(u, 's')
  return r.ok && r.map.b === 0 && r.map.a > 0 ? r.map.a : null
}

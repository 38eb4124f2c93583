/**
 * Dataset columns against a sheet's signals, shared by the server's bindings and the browser's quick
 * simulation: the automatic name match (case, spaces, '-', '_' and '.' ignored) and the conversion of a
 * column's values to the sheet's internal (SI) units (internal = value·scale + offset; a column without
 * a unit is read in the sheet's declared unit; a sheet signal without a unit takes the numbers as they are).
 */
import { parseUnit, sameDims, formatDims } from '../sheet/units'

export const normName = (s: string) => s.toLowerCase().replace(/[\s_\-.]+/g, '')

/** The column whose name matches the signal's, or null. */
export function matchColumn(signal: string, columns: string[]): string | null {
  const n = normName(signal)
  return columns.find((c) => normName(c) === n) ?? null
}

export interface Conversion { scale: number; offset: number }

/** How a column's values become the sheet's internal values, or a problem text. */
export function conversionFor(sheetUnit: string, columnUnit: string): { conv: Conversion } | { problem: string } {
  const su = sheetUnit.trim()
  const cu = columnUnit.trim()
  if (!su) return { conv: { scale: 1, offset: 0 } }
  const s = parseUnit(su)
  if (!s.ok) return { problem: `the sheet's unit '${su}' is not understood: ${s.message}` }
  if (!cu) return { conv: { scale: s.unit.scale, offset: s.unit.offset } }
  const c = parseUnit(cu)
  if (!c.ok) return { problem: `the column's unit '${cu}' is not understood: ${c.message}` }
  if (!sameDims(s.unit.dims, c.unit.dims)) {
    return { problem: `the column's unit '${cu}' (${formatDims(c.unit.dims)}) does not convert to the sheet's unit '${su}' (${formatDims(s.unit.dims)})` }
  }
  return { conv: { scale: c.unit.scale, offset: c.unit.offset } }
}

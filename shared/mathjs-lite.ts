/**
 * The two parts of mathjs Pewter uses, from an instance holding only them and their dependencies
 * (mathjs.org, "Custom bundling": `create` with `…Dependencies`), so a bundle (the command line, the
 * browser) carries and initialises a fraction of the library.
 */
import { create, parseDependencies, unitDependencies } from 'mathjs'

const math = create({ parseDependencies, unitDependencies })

export const parse = math.parse
export const unit = math.unit

/** The names mathjs knows, for spelling help: each unit with the prefixes it takes. */
export function unitNames(): { name: string; prefixes: string[] }[] {
  const U = (math as unknown as { Unit: { UNITS: Record<string, { prefixes?: Record<string, unknown> }> } }).Unit
  return Object.entries(U.UNITS).map(([name, u]) => ({ name, prefixes: Object.keys(u.prefixes ?? {}) }))
}

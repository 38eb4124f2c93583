/**
 * The two parts of mathjs Pewter uses, from an instance holding only them and their dependencies
 * (mathjs.org, "Custom bundling": `create` with `…Dependencies`), so a bundle (the command line, the
 * browser) carries and initialises a fraction of the library.
 */
import { create, parseDependencies, unitDependencies } from 'mathjs'

const math = create({ parseDependencies, unitDependencies })

export const parse = math.parse
export const unit = math.unit

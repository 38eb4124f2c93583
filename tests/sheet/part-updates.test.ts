/**
 * Moving a sheet's parts to other versions: only the pinned version numbers change, and the
 * flattened diff shows the part's changed statements under each part's name. The sheets are the
 * Tinmoor Works templates in models/parts (invented demo plant); the expected lines follow from the
 * flattening rules in docs/sheets.md (each part's statements copied under its name).
 */
import { readFileSync } from 'node:fs'
import { join } from 'node:path'
import { describe, expect, it } from 'vitest'
import { partsResolver, repinParts } from '../../shared/sheet'
import { flattenedDiff } from '../../server/services/part-updates'

const MODELS = join(__dirname, '..', '..', 'models', 'parts')
const tank1 = readFileSync(join(MODELS, 'gravity-tank@1.sheet'), 'utf8')
const tank2 = tank1.replace('param  Cd   = 2e-3', 'param  Cd   = 3e-3').replace('"outlet coefficient"', '"outlet coefficient (drain test)"')
const cascade = readFileSync(join(MODELS, 'tank-cascade.sheet'), 'utf8')
const resolve = partsResolver({ 'gravity-tank@1': tank1, 'gravity-tank@2': tank2 })!

describe('repinParts', () => {
  it('changes only the version of the named parts, keeping comments, spacing and descriptions', () => {
    const out = repinParts(cascade, new Map([['lower', 2]]))
    expect(out.split('\n').filter((l, i) => l !== cascade.split('\n')[i])).toEqual(['part   lower = gravity-tank@2 "lower tank"'])
    // the comment naming the file stays as written
    expect(out).toContain('(models/parts/gravity-tank@1.sheet)')
    const both = repinParts(cascade.replace(/\n/g, '\r\n'), new Map([['upper', 12], ['lower', 2]]))
    expect(both).toContain('part   upper = gravity-tank@12 "upper tank"\r\n')
    expect(both).toContain('part   lower = gravity-tank@2 "lower tank"\r\n')
    expect(repinParts(cascade, new Map([['middle', 3]]))).toBe(cascade)
  })
})

describe('flattenedDiff', () => {
  it('diffs the flattened sheets: the changed part statements under the moved part only', () => {
    const after = repinParts(cascade, new Map([['upper', 2]]))
    const d = flattenedDiff(cascade, after, resolve)
    expect(d.before.flat).not.toBeNull()
    expect(d.after.flat).not.toBeNull()
    const removed = d.lines.filter((l) => l.kind === 'removed').map((l) => l.text)
    const added = d.lines.filter((l) => l.kind === 'added').map((l) => l.text)
    expect(removed).toEqual(['# ---- part upper = gravity-tank@1', 'param  upper.Cd   = 2e-3 [m^2.5/s] in [1e-4, 1e-1]  "outlet coefficient"'])
    expect(added).toEqual(['# ---- part upper = gravity-tank@2', 'param  upper.Cd   = 3e-3 [m^2.5/s] in [1e-4, 1e-1]  "outlet coefficient (drain test)"'])
    expect(d.removed).toBe(2)
    expect(d.added).toBe(2)
    // the lower tank's lines are the same on both sides
    expect(d.lines.some((l) => l.kind === 'same' && l.text.startsWith('param  lower.Cd   = 2e-3'))).toBe(true)
  })

  it('diffs the texts as written when a side does not flatten, and shows nothing for equal sheets', () => {
    const missing = repinParts(cascade, new Map([['upper', 7]]))
    const d = flattenedDiff(cascade, missing, resolve)
    expect(d.after.flat).toBeNull()
    expect(d.lines.filter((l) => l.kind !== 'same').length).toBeGreaterThan(0)
    const same = flattenedDiff(cascade, cascade, resolve)
    expect(same.added + same.removed).toBe(0)
  })
})

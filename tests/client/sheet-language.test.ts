import { describe, expect, it } from 'vitest'
import { readFileSync } from 'node:fs'
import { join } from 'node:path'
import { checkModel } from '../../shared/sheet/index'
import { describeSymbol, partHandleItems, partHandlePrefix, scanSymbols } from '../../src/composables/sheetLanguage'

const MODELS = join(__dirname, '..', '..', 'models')
const lib = (h: string, v: number) => { try { return readFileSync(join(MODELS, 'parts', `${h}@${v}.sheet`), 'utf8') } catch { return null } }

describe('editor symbols for parts and indexed names', () => {
  it('a part hovers with its version, inputs and outputs', () => {
    const text = readFileSync(join(MODELS, 'parts', 'tank-cascade.sheet'), 'utf8')
    const r = checkModel(text, { resolvePart: lib })
    const syms = scanSymbols(text, { ok: r.ok, diagnostics: r.diagnostics, summary: r.summary })
    const upper = syms.find((s) => s.name === 'upper')!
    expect(upper.kind).toBe('part')
    const md = describeSymbol(upper)
    expect(md).toContain('library model **gravity-tank**, pinned at version 1')
    expect(describeSymbol({ ...upper, part: { ...upper.part!, title: 'Gravity-drained tank' } })).toContain('**gravity-tank** (Gravity-drained tank), pinned at version 1')
    expect(md).toContain('upper.q_in [m^3/s]')
    expect(md).toContain('upper.level [m]')
  })
  it('an indexed state hovers with its range', () => {
    const text = readFileSync(join(MODELS, 'heat-exchanger-cells.sheet'), 'utf8')
    const th = scanSymbols(text).find((s) => s.name === 'Th')!
    expect(th.range).toBe('1..N')
    expect(describeSymbol(th)).toMatch(/\*\*Th\[1..N\]\*\* — indexed state \[degC\]/)
    expect(scanSymbols(text).find((s) => s.name === 'q')!.range).toBe('1..N')
  })
})

describe('completing part handles', () => {
  it('offers handles only after `part NAME =`, with the newest approved version first', () => {
    expect(partHandlePrefix('part upper = ')).toBe('')
    expect(partHandlePrefix('  part upper=grav')).toBe('grav')
    expect(partHandlePrefix('part upper = gravity-tank@')).toBeNull()
    expect(partHandlePrefix('param A = ')).toBeNull()
    const entries = [
      { handle: 'gravity-tank', title: 'Gravity-drained tank', latest: 3, latestApproved: 2 },
      { handle: 'pump-curve', title: 'Feed pump curve', latest: 1, latestApproved: null },
    ]
    expect(partHandleItems(entries, 'grav')).toEqual([{ label: 'gravity-tank@2', insert: 'gravity-tank@2', detail: 'Gravity-drained tank — version 2, approved (latest 3)' }])
    // a title word matches too; a model without an approved version offers its latest
    expect(partHandleItems(entries, 'feed').map((i) => [i.label, i.detail])).toEqual([['pump-curve@1', 'Feed pump curve — version 1, not reviewed']])
    expect(partHandleItems(entries, '')).toHaveLength(2)
  })
})

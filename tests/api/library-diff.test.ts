/** The line diff (Myers 1986) and the parameter comparison, on their own. */
import { describe, expect, it } from 'vitest'
import { diffLines, diffParameters, splitLines } from '../../server/services/diff'
import { emptySheetSummary } from '../../shared/api/models'

const lines = (s: string) => s.split('').join('\n')
const apply = (_oldText: string, d: ReturnType<typeof diffLines>) => d.lines.filter((l) => l.kind !== 'removed').map((l) => l.text).join('\n')

describe('diffLines', () => {
  it('finds the shortest edit script of the worked example A = ABCABBA, B = CBABAC (D = 5)', () => {
    // E. W. Myers, "An O(ND) difference algorithm and its variations", Algorithmica 1 (1986),
    // figure 1: the edit graph of these two strings has a shortest edit script of length 5
    // (LCS length 4, e.g. CABA).
    const d = diffLines(lines('ABCABBA'), lines('CBABAC'))
    expect(d.added + d.removed).toBe(5)
    expect(d.removed).toBe(3)
    expect(d.added).toBe(2)
    expect(d.lines.filter((l) => l.kind === 'same')).toHaveLength(4)
    expect(apply(lines('ABCABBA'), d)).toBe(lines('CBABAC'))
  })

  it('numbers old and new lines and keeps them in order', () => {
    const d = diffLines('a\nb\nc\n', 'a\nx\nc\nd\n')
    expect(d.lines).toEqual([
      { kind: 'same', text: 'a', oldLine: 1, newLine: 1 },
      { kind: 'removed', text: 'b', oldLine: 2, newLine: null },
      { kind: 'added', text: 'x', oldLine: null, newLine: 2 },
      { kind: 'same', text: 'c', oldLine: 3, newLine: 3 },
      { kind: 'added', text: 'd', oldLine: null, newLine: 4 },
    ])
  })

  it('handles empty sides and CRLF line ends', () => {
    expect(diffLines('', '').lines).toEqual([])
    expect(diffLines('', 'a\nb').added).toBe(2)
    expect(diffLines('a\nb', '').removed).toBe(2)
    expect(diffLines('a\r\nb\r\n', 'a\nb\n').lines.every((l) => l.kind === 'same')).toBe(true)
    expect(splitLines('x\n\ny')).toEqual(['x', '', 'y'])
  })

  it('always yields a script that turns the old text into the new one (seeded synthetic texts)', () => {
    // synthetic random texts from a fixed-seed linear congruential generator (Numerical Recipes constants)
    let seed = 12345
    const rnd = () => { seed = (seed * 1664525 + 1013904223) >>> 0; return seed / 2 ** 32 }
    for (let trial = 0; trial < 200; trial++) {
      const a = Array.from({ length: Math.floor(rnd() * 30) }, () => 'abcde'[Math.floor(rnd() * 5)])
      const b = Array.from({ length: Math.floor(rnd() * 30) }, () => 'abcde'[Math.floor(rnd() * 5)])
      const d = diffLines(a.join('\n'), b.join('\n'))
      expect(apply(a.join('\n'), d)).toBe(b.join('\n'))
      expect(d.lines.filter((l) => l.kind !== 'added').map((l) => l.text)).toEqual(a)
      // shortest: edits = n + m - 2 * LCS (classic dynamic programme for the LCS length)
      const L: number[][] = Array.from({ length: a.length + 1 }, () => new Array(b.length + 1).fill(0))
      for (let i = 1; i <= a.length; i++) for (let j = 1; j <= b.length; j++) L[i][j] = a[i - 1] === b[j - 1] ? L[i - 1][j - 1] + 1 : Math.max(L[i - 1][j], L[i][j - 1])
      expect(d.added + d.removed).toBe(a.length + b.length - 2 * L[a.length][b.length])
    }
  })
})

describe('diffParameters', () => {
  const s = (parameters: { name: string; value: number; unit: string; lower: number | null; upper: number | null; fixed: boolean }[]) =>
    ({ ...emptySheetSummary(), parameters: parameters.map((p, i) => ({ ...p, description: '', line: i + 1 })) })
  it('reports added, removed and changed parameters with the fields that differ', () => {
    const before = s([
      { name: 'UA', value: 150, unit: 'W/K', lower: 1, upper: 5000, fixed: false },
      { name: 'A', value: 1.2, unit: 'm^2', lower: null, upper: null, fixed: true },
      { name: 'tau', value: 20, unit: 's', lower: 0, upper: 120, fixed: false },
    ])
    const after = s([
      { name: 'UA', value: 150, unit: 'W/K', lower: 1, upper: 8000, fixed: false },
      { name: 'A', value: 1.2, unit: 'm^2', lower: 1, upper: 2, fixed: false },
      { name: 'Cv', value: 4e-3, unit: 'm^2.5/s', lower: 1e-4, upper: 0.1, fixed: false },
    ])
    expect(diffParameters(before, after).map((c) => [c.name, c.change, c.fields])).toEqual([
      ['UA', 'changed', ['bounds']],
      ['A', 'changed', ['bounds', 'fixed']],
      ['tau', 'removed', []],
      ['Cv', 'added', []],
    ])
    expect(diffParameters(before, before)).toEqual([])
  })
})

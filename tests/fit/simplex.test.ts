/**
 * The simplex method (shared/engine/fit/simplex.ts) against outside references: three test functions of
 * J. J. Moré, B. S. Garbow & K. E. Hillstrom, "Testing unconstrained optimization software", ACM TOMS 7
 * (1981) 17–41 (Rosenbrock from (−1.2, 1), minimum 0 at (1, 1); Powell singular from (3, −1, 0, 1),
 * minimum 0 at the origin; Beale from (1, 1), minimum 0 at (3, 0.5)), and the general-purpose fmin
 * package's `nelderMead` (0.0.4), whose sequence of points ours follows: on runs without a shrink step the
 * two give bitwise the same answer. A staircase cost (a quadratic bowl rounded down to whole steps:
 * invented test function) needs shrink steps: ours reaches the bottom step, where fmin 0.0.4 throws (its
 * shrink loop assigns an undeclared variable), which is why Pewter carries its own.
 */
import { describe, expect, it } from 'vitest'
import { nelderMead } from 'fmin/index.js'
import { simplexMinimise } from '../../shared/engine/fit/simplex'

type F = (x: ArrayLike<number>) => number
const cases: { name: string; f: F; start: number[]; min: number[] }[] = [
  { name: 'Rosenbrock', f: (x) => 100 * (x[1] - x[0] ** 2) ** 2 + (1 - x[0]) ** 2, start: [-1.2, 1], min: [1, 1] },
  { name: 'Powell singular', f: (x) => (x[0] + 10 * x[1]) ** 2 + 5 * (x[2] - x[3]) ** 2 + (x[1] - 2 * x[2]) ** 4 + 10 * (x[0] - x[3]) ** 4, start: [3, -1, 0, 1], min: [0, 0, 0, 0] },
  { name: 'Beale', f: (x) => (1.5 - x[0] + x[0] * x[1]) ** 2 + (2.25 - x[0] + x[0] * x[1] ** 2) ** 2 + (2.625 - x[0] + x[0] * x[1] ** 3) ** 2, start: [1, 1], min: [3, 0.5] },
]
const settings = { maxIterations: 4000, tolerance: 1e-10, nonZeroDelta: 1.1 }

describe('simplex method', () => {
  for (const c of cases) {
    it(`${c.name}: reaches the published minimum and follows fmin's points exactly`, () => {
      const ours = simplexMinimise((x) => c.f(x), c.start, settings)
      expect(ours.converged).toBe(true)
      expect(ours.shrinks).toBe(0)
      expect(ours.fx).toBeLessThan(1e-12)
      c.min.forEach((m, i) => expect(Math.abs(ours.x[i] - m)).toBeLessThan(1e-4))
      const theirs = nelderMead((x: number[]) => c.f(x), c.start.slice(), { maxIterations: settings.maxIterations, minErrorDelta: settings.tolerance, nonZeroDelta: 1.1 })
      expect(ours.fx).toBe(theirs.fx)
      expect(Array.from(ours.x)).toEqual(Array.from(theirs.x))
    })
  }

  it('shrinks when it must: a staircase cost is minimised where the package throws', () => {
    // invented test function: (x − 1)² + (y − 2)² in steps of 0.1, so the bottom step is a disc of radius √0.1
    const stair: F = (x) => Math.floor(10 * ((x[0] - 1) ** 2 + (x[1] - 2) ** 2))
    for (const start of [[3, -1], [5, 5], [-2, 7]]) {
      const ours = simplexMinimise((x) => stair(x), start, settings)
      expect(ours.shrinks).toBeGreaterThan(0)
      expect(ours.converged).toBe(true)
      expect(ours.fx).toBe(0)
      expect(Math.hypot(ours.x[0] - 1, ours.x[1] - 2)).toBeLessThan(Math.sqrt(0.1))
      expect(() => nelderMead((x: number[]) => stair(x), start.slice(), { maxIterations: 4000, minErrorDelta: 1e-10, nonZeroDelta: 1.1 })).toThrow(ReferenceError)
    }
  })

  it('passes the cost function\'s exceptions through and stops at the iteration limit', () => {
    class Stop extends Error {}
    let calls = 0
    expect(() => simplexMinimise(() => { if (++calls > 5) throw new Stop(); return calls }, [1, 1], settings)).toThrow(Stop)
    const limited = simplexMinimise((x) => (x[0] - 3) ** 2 + x[1] ** 2, [0, 0], { ...settings, maxIterations: 3 })
    expect(limited.converged).toBe(false)
    expect(limited.iterations).toBe(3)
  })
})

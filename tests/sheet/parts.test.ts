import { spawnSync } from 'node:child_process'
import { readFileSync } from 'node:fs'
import { join } from 'node:path'
import { describe, expect, it } from 'vitest'
import { simulate } from '../../shared/engine'
import { checkModel, compileModel, flatText, type ResolvePart } from '../../shared/sheet/index'
import { MODELS_DIR } from './helpers'

const LIB = join(MODELS_DIR, 'parts')
const folder: ResolvePart = (h, v) => { try { return readFileSync(join(LIB, `${h}@${v}.sheet`), 'utf8') } catch { return null } }
const cascade = readFileSync(join(MODELS_DIR, 'parts', 'tank-cascade.sheet'), 'utf8')
const mapLib = (files: Record<string, string>): ResolvePart => (h, v) => files[`${h}@${v}`] ?? null

// the cascade written out by hand (what the flattening must amount to)
const HAND = `model "Two-tank cascade, written out"
time [s]
input  q_feed = 1.2e-3 [m^3/s] linear
param  upper_A  = 0.8  [m^2]     in [0.1, 5]
param  upper_Cd = 2e-3 [m^2.5/s] in [1e-4, 1e-1]
param  lower_A  = 1.2  [m^2] fixed
param  lower_Cd = 2e-3 [m^2.5/s] in [1e-4, 1e-1]
state  upper_h  = 0.5  [m]
state  lower_h  = 0.3  [m]
let    upper_out = upper_Cd * sqrt(max(upper_h, 0))
let    lower_out = lower_Cd * sqrt(max(lower_h, 0))
dupper_h/dt = (q_feed - upper_out) / upper_A
dlower_h/dt = (upper_out - lower_out) / lower_A
output level_up  = upper_h [m] sigma 0.005
output level_low = lower_h [m] sigma 0.005`

describe('parts', () => {
  it('a two-part composition equals the hand-flattened sheet to 1e-12', () => {
    const c = compileModel(cascade, { resolvePart: folder })
    const h = compileModel(HAND)
    const flatName = (n: string) => n.replace('.', '_')
    expect(c.states.map((s) => flatName(s.name))).toEqual(h.states.map((s) => s.name))
    expect(c.params.map((p) => flatName(p.name))).toEqual(h.params.map((p) => p.name))
    expect(c.params.map((p) => p.fixed)).toEqual([false, false, true, false]) // upper.A free, lower.A fixed
    // right sides and Jacobians at scattered points
    const dx1 = new Float64Array(2), dx2 = new Float64Array(2), J1 = new Float64Array(8), J2 = new Float64Array(8)
    const p = Float64Array.from(c.params.map((q) => q.value)), u = Float64Array.of(1.7e-3)
    for (const x of [[0.5, 0.3], [1.2, 0.01], [0.02, 2.5]]) {
      const xs = Float64Array.from(x)
      c.rhs(0, xs, p, u, dx1); h.rhs(0, xs, p, u, dx2)
      for (let i = 0; i < 2; i++) expect(Math.abs(dx1[i] - dx2[i])).toBeLessThanOrEqual(1e-12 * Math.abs(dx2[i]))
      c.dfdp(0, xs, p, u, J1); h.dfdp(0, xs, p, u, J2)
      for (let i = 0; i < 8; i++) expect(Math.abs(J1[i] - J2[i])).toBeLessThanOrEqual(1e-12 * Math.abs(J2[i]) + 1e-300)
    }
    // and the simulations with sensitivities to the free params
    const tOut = Float64Array.from({ length: 31 }, (_, i) => 60 * i)
    const req = { tOut, rtol: 1e-9, atol: 1e-12, sensitivities: { params: [0, 1, 3], initialStates: [] } }
    const r1 = simulate(c, req), r2 = simulate(h, req)
    for (let i = 0; i < r1.y.length; i++) expect(Math.abs(r1.y[i] - r2.y[i])).toBeLessThanOrEqual(1e-12 * Math.abs(r2.y[i]))
    for (let i = 0; i < r1.dy!.length; i++) expect(Math.abs(r1.dy![i] - r2.dy![i])).toBeLessThanOrEqual(1e-12 * Math.abs(r2.dy![i]) + 1e-15)
  })

  it('two instances of one part are independent and named under the part', () => {
    const r = checkModel(cascade, { resolvePart: folder })
    expect(r.ok).toBe(true)
    expect(r.summary.states.map((s) => [s.name, s.initial])).toEqual([['upper.h', 0.5], ['lower.h', 0.3]])
    expect(r.summary.parts.map((p) => `${p.name}=${p.handle}@${p.version}`)).toEqual(['upper=gravity-tank@1', 'lower=gravity-tank@1'])
    expect(r.summary.partsUsed).toEqual([{ handle: 'gravity-tank', version: 1 }])
    // the part's symbols are placed at the part's line
    expect(r.summary.parameters.find((p) => p.name === 'upper.Cd')!.line).toBe(cascade.split('\n').findIndex((l) => l.startsWith('part   upper')) + 1)
  })

  const tank = readFileSync(join(LIB, 'gravity-tank@1.sheet'), 'utf8')
  const host = (body: string) => `model "h"\ntime [s]\ninput q = 1e-3 [m^3/s]\npart a = gravity-tank@1\n${body}\noutput y = a.level [m]`

  it('checks units across a binding, at the feed line', () => {
    const r = checkModel(host('input w = 1 [kg/s]\nfeed a.q_in = w'), { resolvePart: mapLib({ 'gravity-tank@1': tank }) })
    expect(r.ok).toBe(false)
    const d = r.diagnostics.find((x) => x.severity === 'error')!
    expect(d.line).toBe(6)
    expect(d.message).toBe('part a: unit mismatch: the left side let a.q_in is in m^3/s (as declared), the right side in kg/s')
  })

  it('refuses cycles with the chain named, missing parts, unknown inputs and wrong overrides', () => {
    const a = 'model "a"\npart inner = b-part@2\nstate x = 1\nx\' = -x\noutput y = x'
    const b = 'model "b"\npart back = a-part@1\nstate z = 1\nz\' = -z\noutput w = z'
    const lib = mapLib({ 'a-part@1': a, 'b-part@2': b, 'gravity-tank@1': tank })
    const r = checkModel('part top = a-part@1\nstate s = 1\ns\' = -s\noutput o = s', { resolvePart: lib })
    expect(r.diagnostics[0].message).toBe('part cycle: a-part@1 -> b-part@2 -> a-part@1')
    expect(r.diagnostics[0].line).toBe(1)
    expect(checkModel(host('feed a.q_in = q'), { resolvePart: mapLib({}) }).diagnostics[0].message).toBe("part a: no model 'gravity-tank' version 1 in the library")
    expect(checkModel(host('feed a.q_in = q'), {}).diagnostics[0].message).toMatch(/no library/)
    expect(checkModel(host('feed a.flow = q'), { resolvePart: lib }).diagnostics[0].message).toMatch(/part a \(gravity-tank@1\) has no input 'flow'; its inputs: q_in/)
    expect(checkModel(host('feed a.q_in = q\nconst a.A = 1 [m^2]'), { resolvePart: lib }).diagnostics[0].message).toMatch(/a.A is a param of the part: override it with param a.A/)
    expect(checkModel(host('feed a.q_in = q\nparam a.A = 1 [m] fixed'), { resolvePart: lib }).diagnostics[0].message).toMatch(/a.A is in m\^2 in the part; \[m\] has other dimensions/)
    expect(checkModel(host('feed b.q_in = q'), { resolvePart: lib }).diagnostics.some((x) => /there is no part named 'b'/.test(x.message))).toBe(true)
  })

  it('an unbound input becomes a host input under the part name; outputs read as values', () => {
    const r = checkModel(host(''), { resolvePart: mapLib({ 'gravity-tank@1': tank }) })
    expect(r.ok).toBe(true)
    expect(r.summary.inputs.map((u) => u.name)).toEqual(['q', 'a.q_in'])
    expect(r.summary.outputs[0]).toMatchObject({ name: 'y', unit: 'm' })
  })

  it('nested parts flatten with two-level names and their versions are recorded', () => {
    const pair = 'model "pair"\ntime [s]\ninput f = 1e-3 [m^3/s]\npart t1 = gravity-tank@1\nfeed t1.q_in = f\noutput out = t1.outflow [m^3/s]\noutput lvl = t1.level [m]'
    const lib = mapLib({ 'gravity-tank@1': tank, 'tank-pair@3': pair })
    const r = checkModel('model "top"\ntime [s]\npart p = tank-pair@3\nfeed p.f = 2e-3\noutput y = p.lvl [m]', { resolvePart: lib })
    expect(r.diagnostics).toEqual([])
    expect(r.summary.states.map((s) => s.name)).toEqual(['p.t1.h'])
    expect(r.summary.partsUsed).toEqual([{ handle: 'tank-pair', version: 3 }, { handle: 'gravity-tank', version: 1 }])
    const f = flatText('model "top"\ntime [s]\npart p = tank-pair@3\nfeed p.f = 2e-3\noutput y = p.lvl [m]', { resolvePart: lib })
    expect(f.text).toMatch(/d\(p\.t1\.h\)\/dt = \(p\.t1\.q_in - p\.t1\.q_out\) \/ p\.t1\.A/)
  })

  it('qualified names outside parts are refused', () => {
    const r = checkModel("param a.k = 1 [1] fixed\nstate x = 1\ndx/dt = -x\noutput y = x")
    expect(r.ok).toBe(false)
    expect(r.diagnostics[0].message).toMatch(/there is no part named 'a'/)
  })
})

describe('command line with --library', () => {
  const ROOT = join(__dirname, '..', '..')
  const pewter = (...args: string[]) => {
    const r = spawnSync(process.execPath, ['--import', 'tsx', join(ROOT, 'server', 'cli', 'index.ts'), ...args], { cwd: ROOT, encoding: 'utf8', timeout: 60_000 })
    return { code: r.status, out: r.stdout, err: r.stderr }
  }
  it('check and simulate resolve parts from a folder of <handle>@<version>.sheet files', () => {
    const sheet = join(MODELS_DIR, 'parts', 'tank-cascade.sheet')
    const c = pewter('check', sheet, '--library', LIB)
    expect(c.code).toBe(0)
    expect(JSON.parse(c.out).partsUsed).toEqual([{ handle: 'gravity-tank', version: 1 }])
    const without = pewter('check', sheet)
    expect(without.code).toBe(1)
    expect(JSON.parse(without.out).diagnostics[0].message).toMatch(/part upper: no library to take 'gravity-tank@1' from/)
    const s = pewter('simulate', sheet, '--library', LIB, '--t-end', '600', '--step', '600', '--set', 'upper.A=1.5')
    expect(s.code).toBe(0)
    const last = s.out.trim().split('\n').pop()!.split(',').map(Number)
    // upper tank: dh/dt = (q_feed - Cd sqrt(h)) / A with A = 1.5 falls by about 0.027 m/200 s at first
    expect(last[1]).toBeGreaterThan(0.42); expect(last[1]).toBeLessThan(0.45)
    expect(pewter('check', sheet, '--library', join(LIB, 'nowhere')).code).toBe(2)
  }, 180_000)
})

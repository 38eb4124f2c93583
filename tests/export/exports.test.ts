// Exports run outside Pewter: the C99 source compiled with the system compiler, the ES module imported,
// the FMU's archive and modelDescription.xml checked against the FMI 2.0 standard and its C sources
// compiled and called through a hand-written minimal fmi2Functions.h.
import { describe, expect, it, beforeAll } from 'vitest'
import { execFileSync } from 'node:child_process'
import { mkdtempSync, readFileSync, writeFileSync, mkdirSync } from 'node:fs'
import { tmpdir } from 'node:os'
import { join } from 'node:path'
import { pathToFileURL } from 'node:url'
import { crc32 as nodeCrc32 } from 'node:zlib'
import { compileModel, parseModel, type CompiledModel } from '../../shared/sheet/index'
import { analyzeModel, linearize, inputSlots, resolveValues } from '../../shared/engine/linear/index'
import { simulate } from '../../shared/engine/simulate'
import { RESULT_CAUTION } from '../../shared/api/runs'
import { buildExport, crc32, exportC, exportEsModule, exportFmu, exportMeta, stateSpaceCsv, stateSpaceJson } from '../../shared/export/index'
import { TANK } from '../linear/sheets'

const root = join(__dirname, '..', '..')
const dir = mkdtempSync(join(tmpdir(), 'pewter-export-'))
const sheetText = (name: string) => readFileSync(join(root, 'models', `${name}.sheet`), 'utf8')

/** classical fixed-step RK4 (Hairer, Nørsett & Wanner, Solving ODEs I, Sec. II.1, Table 1.2), constant inputs */
function rk4(model: CompiledModel, x0: Float64Array, p: Float64Array, u: Float64Array, h: number, steps: number): Float64Array {
  const n = model.nx
  const x = Float64Array.from(x0)
  const k1 = new Float64Array(n), k2 = new Float64Array(n), k3 = new Float64Array(n), k4 = new Float64Array(n), xt = new Float64Array(n)
  let t = 0
  for (let s = 0; s < steps; s++) {
    model.rhs(t, x, p, u, k1)
    for (let i = 0; i < n; i++) xt[i] = x[i] + 0.5 * h * k1[i]
    model.rhs(t + 0.5 * h, xt, p, u, k2)
    for (let i = 0; i < n; i++) xt[i] = x[i] + 0.5 * h * k2[i]
    model.rhs(t + 0.5 * h, xt, p, u, k3)
    for (let i = 0; i < n; i++) xt[i] = x[i] + h * k3[i]
    model.rhs(t + h, xt, p, u, k4)
    for (let i = 0; i < n; i++) x[i] += (h / 6) * (k1[i] + 2 * k2[i] + 2 * k3[i] + k4[i])
    t += h
  }
  return x
}

/** the same RK4 in C over the exported functions; prints the final states */
function cHarness(prefix: string, h: number, steps: number): string {
  const P = prefix.toUpperCase()
  return `#include <stdio.h>
#include "${prefix}.h"
#define NA(n) ((n) > 0 ? (n) : 1)
int main(void) {
  double x[NA(${P}_NX)], xt[NA(${P}_NX)], k1[NA(${P}_NX)], k2[NA(${P}_NX)], k3[NA(${P}_NX)], k4[NA(${P}_NX)];
  double u[NA(${P}_NU + ${P}_ND)];
  const double h = ${h};
  double t = 0;
  for (int i = 0; i < ${P}_NX; i++) x[i] = ${prefix}_initial_state[i];
  for (int i = 0; i < ${P}_NU + ${P}_ND; i++) u[i] = ${prefix}_default_inputs[i];
  for (int s = 0; s < ${steps}; s++) {
    ${prefix}_rhs(t, x, ${prefix}_parameters, u, k1);
    for (int i = 0; i < ${P}_NX; i++) xt[i] = x[i] + 0.5 * h * k1[i];
    ${prefix}_rhs(t + 0.5 * h, xt, ${prefix}_parameters, u, k2);
    for (int i = 0; i < ${P}_NX; i++) xt[i] = x[i] + 0.5 * h * k2[i];
    ${prefix}_rhs(t + 0.5 * h, xt, ${prefix}_parameters, u, k3);
    for (int i = 0; i < ${P}_NX; i++) xt[i] = x[i] + h * k3[i];
    ${prefix}_rhs(t + h, xt, ${prefix}_parameters, u, k4);
    for (int i = 0; i < ${P}_NX; i++) x[i] += (h / 6) * (k1[i] + 2 * k2[i] + 2 * k3[i] + k4[i]);
    t += h;
  }
  for (int i = 0; i < ${P}_NX; i++) printf("%.17g\\n", x[i]);
  double jx[NA(${P}_NX * ${P}_NX)];
  ${prefix}_dfdx(t, x, ${prefix}_parameters, u, jx);
  for (int i = 0; i < ${P}_NX * ${P}_NX; i++) printf("%.17g\\n", jx[i]);
  return 0;
}
`
}

const relDiff = (a: ArrayLike<number>, b: ArrayLike<number>) => {
  let worst = 0
  for (let i = 0; i < a.length; i++) worst = Math.max(worst, Math.abs(a[i] - b[i]) / Math.max(Math.abs(b[i]), 1e-12))
  return worst
}

const CASES = [
  // lookups, sqrt, max, a delayed input slot (held constant), heat balance with 1/h
  { name: 'heated-buffer-vessel', h: 1, steps: 600 },
  // Arrhenius kinetics, three states
  { name: 'jacketed-reactor', h: 2, steps: 900 },
  // stiff-ish oscillator in SI with mm output
  { name: 'vibration-isolator', h: 1e-3, steps: 2000 },
]

describe('C99 export compiled with the system compiler', () => {
  for (const c of CASES) {
    it(`${c.name}: RK4 on the compiled C agrees with RK4 on Pewter's own functions to 1e-8`, () => {
      const text = sheetText(c.name)
      const model = compileModel(text)
      const parsed = parseModel(text).model!
      // a parameter changed away from the sheet, so that the baked-in values are seen to be used
      const p = Float64Array.from(model.params, (q) => q.value * 1.1)
      const prefix = `pw_${c.name.replace(/-/g, '_')}`
      const ex = exportC(parsed, model, p, exportMeta(model, `${c.name}.sheet`, 'test values'), prefix)
      const d = join(dir, prefix)
      mkdirSync(d, { recursive: true })
      writeFileSync(join(d, ex.headerName), ex.header)
      writeFileSync(join(d, ex.sourceName), ex.source)
      writeFileSync(join(d, 'main.c'), cHarness(prefix, c.h, c.steps))
      execFileSync('cc', ['-std=c99', '-Wall', '-Wextra', '-pedantic', '-Werror', '-O0', '-o', join(d, 'run'), join(d, 'main.c'), join(d, ex.sourceName), '-lm'])
      const out = execFileSync(join(d, 'run'), { encoding: 'utf8' }).trim().split('\n').map(Number)
      const u = inputSlots(model, Float64Array.from(model.inputs, (s) => s.value))
      const x0 = Float64Array.from(model.states, (s) => s.initial)
      const xs = rk4(model, x0, p, u, c.h, c.steps)
      expect(relDiff(out.slice(0, model.nx), xs)).toBeLessThan(1e-8)
      const J = new Float64Array(model.nx * model.nx)
      model.dfdx(c.h * c.steps, xs, p, u, J)
      expect(relDiff(out.slice(model.nx), J)).toBeLessThan(1e-8)
      // and both follow Pewter's adaptive simulation (rtol 1e-10) to the RK4 truncation error
      if (model.nd === 0) {
        const constant = { ...model, states: model.states.map((s) => ({ ...s, steady: false })) }
        const sim = simulate(constant, { tOut: Float64Array.of(c.h * c.steps), p, x0, rtol: 1e-10 })
        expect(relDiff(xs, sim.x)).toBeLessThan(1e-5)
      }
      // model version, provenance and caution travel with the code
      expect(ex.header).toContain(`${c.name}.sheet`)
      expect(ex.header).toContain('test values')
      expect(ex.source).toContain(RESULT_CAUTION.slice(0, 60))
    })
  }
})

describe('ES module export', () => {
  it('imports in Node and steps to the same states as Pewter\'s functions', async () => {
    const text = sheetText('heated-buffer-vessel')
    const model = compileModel(text)
    const parsed = parseModel(text).model!
    const p = Float64Array.from(model.params, (q) => q.value * 0.9)
    const src = exportEsModule(parsed, model, p, exportMeta(model, 'heated-buffer-vessel.sheet, version 4', 'Cv from fit run #7'))
    const file = join(dir, 'vessel.mjs')
    writeFileSync(file, src)
    const mod = await import(pathToFileURL(file).href)
    expect(mod.meta.provenance).toBe('Cv from fit run #7')
    expect(mod.meta.modelVersion).toBe('heated-buffer-vessel.sheet, version 4')
    expect(mod.meta.caution).toBe(RESULT_CAUTION)
    expect(mod.states.map((s: { name: string }) => s.name)).toEqual(['h', 'T'])
    expect(Array.from(mod.parameterValues as Float64Array)).toEqual(Array.from(p))
    const asModel = { ...model, rhs: mod.rhs } as CompiledModel
    const u = mod.defaultInputs as Float64Array
    const a = rk4(asModel, mod.initialState, mod.parameterValues, u, 1, 600)
    const b = rk4(model, Float64Array.from(model.states, (s) => s.initial), p, u, 1, 600)
    expect(relDiff(a, b)).toBeLessThan(1e-8)
    const ja = new Float64Array(4), jb = new Float64Array(4)
    mod.dfdx(0, a, mod.parameterValues, u, ja)
    model.dfdx(0, a, p, u, jb)
    expect(Array.from(ja)).toEqual(Array.from(jb))
  })
})

/** central directory of a zip: names, CRCs, sizes (APPNOTE.TXT Sec. 4.3.12, 4.3.16) */
function zipEntries(z: Uint8Array): { name: string; crc: number; size: number; offset: number }[] {
  const dv = new DataView(z.buffer, z.byteOffset, z.byteLength)
  const eocd = z.byteLength - 22
  expect(dv.getUint32(eocd, true)).toBe(0x06054b50)
  const n = dv.getUint16(eocd + 10, true)
  let o = dv.getUint32(eocd + 16, true)
  const out = []
  for (let k = 0; k < n; k++) {
    expect(dv.getUint32(o, true)).toBe(0x02014b50)
    const len = dv.getUint16(o + 28, true)
    out.push({ name: new TextDecoder().decode(z.subarray(o + 46, o + 46 + len)), crc: dv.getUint32(o + 16, true), size: dv.getUint32(o + 24, true), offset: dv.getUint32(o + 42, true) })
    o += 46 + len + dv.getUint16(o + 30, true) + dv.getUint16(o + 32, true)
  }
  return out
}

/** a minimal fmi2Functions.h written from the standard's type definitions (FMI 2.0, Sec. 2.1.2–2.1.4, 3.2) */
const FMI2_H = `#ifndef FMI2_MIN_H
#define FMI2_MIN_H
#include <stddef.h>
typedef void *fmi2Component;
typedef void *fmi2ComponentEnvironment;
typedef void *fmi2FMUstate;
typedef unsigned int fmi2ValueReference;
typedef double fmi2Real;
typedef int fmi2Integer;
typedef int fmi2Boolean;
typedef char fmi2Char;
typedef const fmi2Char *fmi2String;
typedef char fmi2Byte;
#define fmi2True 1
#define fmi2False 0
typedef enum { fmi2OK, fmi2Warning, fmi2Discard, fmi2Error, fmi2Fatal, fmi2Pending } fmi2Status;
typedef enum { fmi2ModelExchange, fmi2CoSimulation } fmi2Type;
typedef void (*fmi2CallbackLogger)(fmi2ComponentEnvironment, fmi2String, fmi2Status, fmi2String, fmi2String, ...);
typedef void *(*fmi2CallbackAllocateMemory)(size_t, size_t);
typedef void (*fmi2CallbackFreeMemory)(void *);
typedef void (*fmi2StepFinished)(fmi2ComponentEnvironment, fmi2Status);
typedef struct {
  const fmi2CallbackLogger logger;
  const fmi2CallbackAllocateMemory allocateMemory;
  const fmi2CallbackFreeMemory freeMemory;
  const fmi2StepFinished stepFinished;
  const fmi2ComponentEnvironment componentEnvironment;
} fmi2CallbackFunctions;
typedef struct {
  fmi2Boolean newDiscreteStatesNeeded;
  fmi2Boolean terminateSimulation;
  fmi2Boolean nominalsOfContinuousStatesChanged;
  fmi2Boolean valuesOfContinuousStatesChanged;
  fmi2Boolean nextEventTimeDefined;
  fmi2Real nextEventTime;
} fmi2EventInfo;
fmi2Component fmi2Instantiate(fmi2String, fmi2Type, fmi2String, fmi2String, const fmi2CallbackFunctions *, fmi2Boolean, fmi2Boolean);
void fmi2FreeInstance(fmi2Component);
fmi2Status fmi2SetupExperiment(fmi2Component, fmi2Boolean, fmi2Real, fmi2Real, fmi2Boolean, fmi2Real);
fmi2Status fmi2EnterInitializationMode(fmi2Component);
fmi2Status fmi2ExitInitializationMode(fmi2Component);
fmi2Status fmi2GetReal(fmi2Component, const fmi2ValueReference[], size_t, fmi2Real[]);
fmi2Status fmi2SetReal(fmi2Component, const fmi2ValueReference[], size_t, const fmi2Real[]);
fmi2Status fmi2SetTime(fmi2Component, fmi2Real);
fmi2Status fmi2SetContinuousStates(fmi2Component, const fmi2Real[], size_t);
fmi2Status fmi2GetContinuousStates(fmi2Component, fmi2Real[], size_t);
fmi2Status fmi2GetDerivatives(fmi2Component, fmi2Real[], size_t);
fmi2Status fmi2GetDirectionalDerivative(fmi2Component, const fmi2ValueReference[], size_t, const fmi2ValueReference[], size_t, const fmi2Real[], fmi2Real[]);
#endif
`

describe('source FMU (FMI 2.0 Model Exchange)', () => {
  const model = compileModel(TANK)
  const parsed = parseModel(TANK).model!
  const v = resolveValues(model, { set: { a: 0.0012 } })
  const meta = exportMeta(model, 'Gravity-drained tank, version 2', v.provenance)
  const fmu = exportFmu(parsed, model, v.p, meta, 'gravity_drained_tank')
  let entries: ReturnType<typeof zipEntries>
  beforeAll(() => {
    entries = zipEntries(fmu.zip)
  })

  it('has modelDescription.xml at the root and the C sources under sources/ (FMI 2.0, Sec. 2.3)', () => {
    const names = entries.map((e) => e.name)
    expect(names).toContain('modelDescription.xml')
    expect(names).toEqual(expect.arrayContaining(['sources/gravity_drained_tank.c', 'sources/gravity_drained_tank.h', 'sources/gravity_drained_tank_fmi2.c']))
    // CRC-32 of every entry as Node's zlib computes it (an independent implementation)
    for (const e of entries) {
      const f = fmu.files.find((x) => x.name === e.name)!
      const bytes = new TextEncoder().encode(f.data)
      expect(e.crc).toBe(nodeCrc32(bytes))
      expect(e.size).toBe(bytes.length)
    }
    expect(crc32(new TextEncoder().encode('123456789'))).toBe(0xcbf43926) // the CRC-32 check value (ITU-T V.42 / ISO 3309)
    // the system's unzip reads and verifies the archive
    const file = join(dir, 'tank.fmu')
    writeFileSync(file, fmu.zip)
    const listing = execFileSync('unzip', ['-t', file], { encoding: 'utf8' })
    expect(listing).toMatch(/No errors detected/)
  })

  it('modelDescription.xml carries every variable with value reference, causality, variability, unit and fitted start', () => {
    const md = fmu.modelDescription
    // Sec. 2.2.1: fmiModelDescription requires fmiVersion "2.0", modelName and guid
    expect(md).toMatch(/<fmiModelDescription fmiVersion="2\.0" modelName="Gravity-drained tank" guid="\{[0-9a-f-]{36}\}"/)
    // Sec. 3.3: a Model Exchange FMU has <ModelExchange modelIdentifier=…>; source FMUs list <SourceFiles> (Sec. 2.2.1)
    expect(md).toMatch(/<ModelExchange modelIdentifier="gravity_drained_tank"/)
    expect(md).toMatch(/<File name="gravity_drained_tank\.c"\/>/)
    const svs = [...md.matchAll(/<ScalarVariable ([^>]*)>\s*<Real([^>]*?)\/>/g)].map((m) => {
      const attrs = Object.fromEntries([...(m[1] + m[2]).matchAll(/(\w+)="([^"]*)"/g)].map((a) => [a[1], a[2]]))
      return attrs
    })
    // Sec. 2.2.7: every ScalarVariable has a name and a unique valueReference
    expect(svs.map((s) => s.name)).toEqual(['h', 'der(h)', 'A', 'a', 'q', 'level'])
    expect(new Set(svs.map((s) => s.valueReference)).size).toBe(svs.length)
    const by = Object.fromEntries(svs.map((s) => [s.name, s]))
    expect(by.h).toMatchObject({ causality: 'local', variability: 'continuous', initial: 'exact', unit: 'm', start: '1' })
    // a derivative names its state by index (Sec. 2.2.7, attribute "derivative"); 1-based
    expect(by['der(h)']).toMatchObject({ derivative: '1', initial: 'calculated' })
    // parameters: causality parameter, variability fixed, the exported (here: set) values as start
    expect(by.a).toMatchObject({ causality: 'parameter', variability: 'fixed', initial: 'exact', unit: 'm^2', start: '0.0012' })
    expect(by.A).toMatchObject({ start: '0.8' })
    // inputs need a start value and no initial attribute (Sec. 2.2.7, table of combinations)
    expect(by.q).toMatchObject({ causality: 'input', variability: 'continuous', start: '0.002' })
    expect(by.q.initial).toBeUndefined()
    expect(by.level).toMatchObject({ causality: 'output', variability: 'continuous', initial: 'calculated', unit: 'm' })
    // Sec. 2.2.8: ModelStructure lists outputs and derivatives by variable index
    expect(md).toMatch(/<Outputs>\s*<Unknown index="6"\/>\s*<\/Outputs>/)
    expect(md).toMatch(/<Derivatives>\s*<Unknown index="2"\/>\s*<\/Derivatives>/)
    // every unit used is defined (Sec. 2.2.2)
    for (const u of new Set(svs.map((s) => s.unit).filter(Boolean))) expect(md).toContain(`<Unit name="${u}"/>`)
    // model version, provenance and caution
    expect(md).toContain('version="Gravity-drained tank, version 2"')
    expect(md).toContain('a = 0.0012 set by hand')
    expect(md).toContain(RESULT_CAUTION.slice(0, 40))
  })

  it('its C sources compile against a minimal fmi2Functions.h and give the derivatives and Jacobian Pewter computes', () => {
    const d = join(dir, 'fmu')
    mkdirSync(d, { recursive: true })
    for (const f of fmu.files) if (f.name.startsWith('sources/')) writeFileSync(join(d, f.name.slice(8)), f.data)
    writeFileSync(join(d, 'fmi2Functions.h'), FMI2_H)
    writeFileSync(join(d, 'main.c'), `#include <stdio.h>
#include <stdlib.h>
#include "fmi2Functions.h"
static void logger(fmi2ComponentEnvironment e, fmi2String n, fmi2Status s, fmi2String c, fmi2String m, ...) { (void)e; (void)n; (void)s; (void)c; fprintf(stderr, "%s\\n", m); }
int main(int argc, char **argv) {
  fmi2CallbackFunctions cb = { logger, calloc, free, NULL, NULL };
  if (fmi2Instantiate("x", fmi2ModelExchange, "{wrong}", "", &cb, 0, 0) != NULL) return 3;
  fmi2Component c = fmi2Instantiate("tank", fmi2ModelExchange, argv[1], "", &cb, 0, 0);
  if (!c || argc < 2) return 2;
  fmi2SetupExperiment(c, 0, 0, 0, 0, 0);
  fmi2EnterInitializationMode(c);
  fmi2ExitInitializationMode(c);
  fmi2ValueReference vrA = 2; fmi2Real A = 1.1;       /* parameter A */
  fmi2SetReal(c, &vrA, 1, &A);
  fmi2Real x = 2.5;
  fmi2SetTime(c, 0);
  fmi2SetContinuousStates(c, &x, 1);
  fmi2Real dx;
  if (fmi2GetDerivatives(c, &dx, 1) != fmi2OK) return 4;
  fmi2ValueReference out[2] = { 1, 5 }; fmi2Real v[2];
  fmi2GetReal(c, out, 2, v);
  fmi2ValueReference un = 1, kn = 0; fmi2Real one = 1, jac;
  fmi2GetDirectionalDerivative(c, &un, 1, &kn, 1, &one, &jac);
  printf("%.17g\\n%.17g\\n%.17g\\n%.17g\\n", dx, v[0], v[1], jac);
  fmi2FreeInstance(c);
  return 0;
}
`)
    execFileSync('cc', ['-std=c99', '-Wall', '-Wextra', '-Werror', '-I', d, '-o', join(d, 'run'), join(d, 'main.c'), join(d, 'gravity_drained_tank.c'), join(d, 'gravity_drained_tank_fmi2.c'), '-lm'])
    const [dx, der, level, jac] = execFileSync(join(d, 'run'), [fmu.guid], { encoding: 'utf8' }).trim().split('\n').map(Number)
    const p = Float64Array.from(v.p)
    p[model.params.findIndex((q) => q.name === 'A')] = 1.1
    const f = new Float64Array(1)
    model.rhs(0, Float64Array.of(2.5), p, inputSlots(model, v.u), f)
    expect(relDiff([dx, der], [f[0], f[0]])).toBeLessThan(1e-12)
    expect(level).toBe(2.5)
    const lin = linearize(model, 0, Float64Array.of(2.5), p, inputSlots(model, v.u))
    expect(relDiff([jac], [lin.A[0]])).toBeLessThan(1e-12)
  })

  it('refuses sheets it cannot express, saying why', () => {
    const text = sheetText('heated-buffer-vessel')
    const m = compileModel(text)
    expect(() => exportFmu(parseModel(text).model!, m, Float64Array.from(m.params, (q) => q.value), meta, 'vessel')).toThrow(/delays input\(s\) 'T_feed'/)
    const dt = sheetText('discrete-first-order')
    const md = compileModel(dt)
    expect(() => exportFmu(parseModel(dt).model!, md, Float64Array.from(md.params, (q) => q.value), meta, 'disc')).toThrow(/continuous sheet/)
  })
})

describe('A, B, C, D as JSON and CSV', () => {
  it('carry the matrices, the point, the model version, provenance and caution', () => {
    const model = compileModel(TANK)
    const v = resolveValues(model, {})
    const a = analyzeModel(model, { p: v.p, u: v.u, at: 'steady', provenance: v.provenance, frequencies: 0, steps: false })
    const meta = exportMeta(model, 'tank.sheet', v.provenance)
    const j = JSON.parse(stateSpaceJson(a, meta))
    expect(j.A).toEqual(a.A)
    expect(j.model.version).toBe('tank.sheet')
    expect(j.provenance).toBe('sheet values')
    expect(j.caution).toBe(RESULT_CAUTION)
    expect(j.states[0]).toMatchObject({ name: 'h', unit: 'm' })
    const csv = stateSpaceCsv(a, meta)
    const rows = csv.trim().split('\r\n').filter((l) => !l.startsWith('#'))
    expect(rows[0]).toBe('block,row,column,value')
    expect(rows).toContain(`A,h,h,${a.A[0][0]}`)
    expect(rows).toContain(`B,h,q,${a.B[0][0]}`)
    expect(csv).toContain('# model version: tank.sheet')
    expect(csv).toContain(RESULT_CAUTION)
    const file = buildExport({ format: 'ss-csv', parsed: parseModel(TANK).model!, model, p: v.p, meta, analysis: a })
    expect(file.fileName).toBe('gravity_drained_tank-state-space.csv')
  })
})

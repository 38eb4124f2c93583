/**
 * C99 export of a compiled sheet: a header and a source file with the same nine model functions as
 * the compiled JavaScript (shared/sheet/codegen.ts, generated from the same expression tree through a
 * C dialect), the parameter values, initial states, default inputs, names, units and unit maps. The
 * functions write into caller arrays and never allocate; they need only <math.h> (small helpers keep
 * JavaScript's NaN behaviour of min, max and sign).
 * Values are in internal (coherent SI) units, time in the sheet's time unit, as in the compiled model
 * (shared/sheet/compiled.ts describes the layouts); `<prefix>_to_internal` maps declared values.
 */
import type { CompiledModel } from '../sheet/compiled'
import type { ParsedModel } from '../sheet/model'
import { GENERATED, generateFunctions } from '../sheet/codegen'
import type { Dialect } from '../sheet/emitter'
import type { CmpOp, FnName } from '../sheet/ast'
import { blockComment, metaLines, refuseEvents, type ExportMeta } from './meta'

/** a C double literal that reads back to exactly v */
export function cLit(v: number): string {
  if (Number.isNaN(v)) return 'NAN'
  if (v === Infinity) return 'INFINITY'
  if (v === -Infinity) return '(-INFINITY)'
  const neg = v < 0 || Object.is(v, -0)
  let s = String(Math.abs(v))
  if (!/[.eE]/.test(s)) s += '.0'
  return neg ? `(-${s})` : s
}

const C_FN: Record<string, string> = {
  sin: 'sin', cos: 'cos', tan: 'tan', asin: 'asin', acos: 'acos', atan: 'atan', sinh: 'sinh', cosh: 'cosh', tanh: 'tanh',
  exp: 'exp', log: 'log', log10: 'log10', sqrt: 'sqrt', abs: 'fabs', floor: 'floor', ceil: 'ceil', atan2: 'atan2', pow: 'pow',
}

export function cDialect(prefix: string): Dialect {
  return {
    lit: cLit,
    fn: (f: FnName, args: string[]) => {
      if (f === 'sign' || f === 'min' || f === 'max') return `${prefix}_${f}(${args.join(',')})`
      if (f === 'hypot') return args.length === 1 ? `fabs(${args[0]})` : args.slice(1).reduce((acc, a) => `hypot(${acc},${a})`, args[0])
      return `${C_FN[f]}(${args.join(',')})`
    },
    cmp: (op: CmpOp) => op,
    decl: (name, value) => `const double ${name}=${value}; (void)${name};`,
    open: (name) => `void ${prefix}_${name}(double t, const double *x, const double *p, const double *u, double *out) {\n(void)t; (void)x; (void)p; (void)u; (void)out;`,
    zero: (n) => (n > 0 ? `for (int k = 0; k < ${n}; k++) out[k] = 0.0;` : ''),
    lookup: (i, d, arg) => `${prefix}_${d ? 'lkd' : 'lkv'}(${prefix}_X${i},${prefix}_Y${i},${prefix}_NL${i},${arg})`,
    spt: `${prefix.toUpperCase()}_SPT`,
    unused: (name) => `(void)${name};`,
  }
}

export interface CExport {
  headerName: string
  sourceName: string
  header: string
  source: string
}

const arr = (xs: ArrayLike<number>) => (xs.length ? Array.from(xs, cLit).join(', ') : '0.0')
const strs = (xs: string[]) => (xs.length ? xs.map((s) => JSON.stringify(s)).join(', ') : '""')

/**
 * p: parameter values (internal units) baked in as `<prefix>_parameters`; x0 and u0 likewise (u0 over
 * all nu + nd input slots).
 */
export function exportC(parsed: ParsedModel, model: CompiledModel, p: Float64Array, meta: ExportMeta, prefix: string, x0?: Float64Array): CExport {
  refuseEvents(model, 'C')
  const P = prefix.toUpperCase()
  const d = cDialect(prefix)
  const fns = generateFunctions(parsed, d)
  const nuu = model.nu + model.nd
  const u0 = new Float64Array(nuu)
  model.inputs.forEach((s, i) => (u0[i] = s.value))
  model.delays.forEach((dl, k) => (u0[model.nu + k] = model.inputs[dl.input].value))
  const x = x0 ?? Float64Array.from(model.states, (s) => s.initial)
  const headerName = `${prefix}.h`
  const sourceName = `${prefix}.c`
  const sizes: [string, number][] = [['NX', model.nx], ['NP', model.np], ['NU', model.nu], ['ND', model.nd], ['NY', model.ny]]
  const sig = (n: string) => `void ${prefix}_${n}(double t, const double *x, const double *p, const double *u, double *out);`
  const header = [
    blockComment([
      ...metaLines(meta),
      '',
      'Layouts (all double arrays, row-major Jacobians, values in internal coherent SI units, t in the sheet\'s',
      `time unit "${model.timeUnit}"): x[${P}_NX] states, p[${P}_NP] parameters, u[${P}_NU + ${P}_ND] inputs then`,
      'delayed-input slots (slot NU + k holds delayed input k read at t - tau_k), out as named:',
      `  rhs: ${model.kind === 'discrete' ? 'x(k+1)' : 'dx/dt'} [NX]; outputs [NY]; dfdx [NX*NX]; dfdp [NX*NP]; dfdu [NX*(NU+ND)];`,
      '  dfdt [NX]; dgdx [NY*NX]; dgdp [NY*NP]; dgdu [NY*(NU+ND)].',
      'Declared (sheet) units: internal = declared * scale + offset (arrays *_scale, *_offset).',
    ]),
    `#ifndef ${P}_H`,
    `#define ${P}_H`,
    '',
    ...sizes.map(([k, v]) => `#define ${P}_${k} ${v}`),
    `#define ${P}_DISCRETE ${model.kind === 'discrete' ? 1 : 0}`,
    `#define ${P}_SAMPLE_TIME ${cLit(model.sampleTime ?? 0)}`,
    `#define ${P}_TIME_UNIT ${JSON.stringify(model.timeUnit)}`,
    `#define ${P}_MODEL_VERSION ${JSON.stringify(meta.modelVersion)}`,
    `#define ${P}_SHEET_HASH ${JSON.stringify(meta.sheetHash)}`,
    `#define ${P}_PROVENANCE ${JSON.stringify(meta.provenance)}`,
    `#define ${P}_CAUTION ${JSON.stringify(meta.caution)}`,
    '',
    ...GENERATED.map(sig),
    '',
    ...['parameters', 'initial_state', 'default_inputs'].map((n) => `extern const double ${prefix}_${n}[];`),
    ...['state', 'parameter', 'input', 'output'].flatMap((n) => [
      `extern const char *const ${prefix}_${n}_names[];`,
      `extern const char *const ${prefix}_${n}_units[];`,
      `extern const double ${prefix}_${n}_scale[];`,
      `extern const double ${prefix}_${n}_offset[];`,
    ]),
    '',
    `#endif /* ${P}_H */`,
    '',
  ].join('\n')
  const groups: [string, { name: string; unit: string; scale: number; offset: number }[]][] = [
    ['state', model.states], ['parameter', model.params], ['input', model.inputs], ['output', model.outputs],
  ]
  const source = [
    blockComment(metaLines(meta)),
    '#include <math.h>',
    `#include "${headerName}"`,
    '',
    `#define ${P}_SPT ${cLit(model.secondsPerTimeUnit)}`,
    '',
    `const double ${prefix}_parameters[] = { ${arr(p)} };`,
    `const double ${prefix}_initial_state[] = { ${arr(x)} };`,
    `const double ${prefix}_default_inputs[] = { ${arr(u0)} };`,
    ...groups.flatMap(([n, xs]) => [
      `const char *const ${prefix}_${n}_names[] = { ${strs(xs.map((s) => s.name))} };`,
      `const char *const ${prefix}_${n}_units[] = { ${strs(xs.map((s) => s.unit))} };`,
      `const double ${prefix}_${n}_scale[] = { ${arr(xs.map((s) => s.scale))} };`,
      `const double ${prefix}_${n}_offset[] = { ${arr(xs.map((s) => s.offset))} };`,
    ]),
    '',
    `static inline double ${prefix}_sign(double v) { return v != v ? v : (v > 0.0 ? 1.0 : (v < 0.0 ? -1.0 : v)); }`,
    `static inline double ${prefix}_min(double a, double b) { return (a != a || b != b) ? NAN : (a < b ? a : b); }`,
    `static inline double ${prefix}_max(double a, double b) { return (a != a || b != b) ? NAN : (a > b ? a : b); }`,
    ...parsed.lookups.flatMap((l, i) => [
      `static const double ${prefix}_X${i}[] = { ${arr(l.xs)} };`,
      `static const double ${prefix}_Y${i}[] = { ${arr(l.ys)} };`,
      `#define ${prefix}_NL${i} ${l.xs.length}`,
    ]),
    ...(parsed.lookups.length ? [
      '/* 1-D table, linear between points, clamped at the ends; NaN stays NaN */',
      `static inline double ${prefix}_lkv(const double *X, const double *Y, int n, double v) {`,
      '  if (v != v) return v;',
      '  if (v <= X[0]) return Y[0];',
      '  if (v >= X[n - 1]) return Y[n - 1];',
      '  int lo = 0, hi = n - 1;',
      '  while (hi - lo > 1) { int k = (lo + hi) >> 1; if (X[k] <= v) lo = k; else hi = k; }',
      '  return Y[lo] + (Y[lo + 1] - Y[lo]) * (v - X[lo]) / (X[lo + 1] - X[lo]);',
      '}',
      `static inline double ${prefix}_lkd(const double *X, const double *Y, int n, double v) {`,
      '  if (v != v) return v;',
      '  if (v <= X[0] || v >= X[n - 1]) return 0.0;',
      '  int lo = 0, hi = n - 1;',
      '  while (hi - lo > 1) { int k = (lo + hi) >> 1; if (X[k] <= v) lo = k; else hi = k; }',
      '  return (Y[lo + 1] - Y[lo]) / (X[lo + 1] - X[lo]);',
      '}',
    ] : []),
    '',
    ...GENERATED.map((n) => fns[n]),
    '',
  ].join('\n')
  return { headerName, sourceName, header, source }
}

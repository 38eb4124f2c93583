import { checkModel, compileModel } from '../shared/sheet/index'
const head = 'state x = 1 [1]\n'
const cases: Record<string, string> = {
  longsum: head + "x' = " + Array(1999).fill('x').join('+'),
  unary: head + "x' = " + '-'.repeat(1990) + 'x',
  unary2: head + "x' = " + '- '.repeat(1990) + 'x',
  powchain: head + "x' = " + Array(1000).fill('x').join('^'),
  deepparen: head + "x' = " + '('.repeat(1000) + 'x' + ')'.repeat(1000),
  decls: Array.from({ length: 10000 }, (_, i) => `param p${i} = ${i} [1] in [0, 1e6]`).join('\n') + '\nstate x = 1 [1]\nx\' = -p1*x\noutput y = x',
  lets: 'state x = 1 [1]\nlet a0 = x\n' + Array.from({ length: 10000 }, (_, i) => `let a${i + 1} = a${i} + 1`).join('\n') + "\nx' = -a10000\noutput y = x",
  garbage: Array.from({ length: 5000 }, (_, i) => String.fromCharCode((i * 7919) % 256)).join(''),
}
for (const [k, v] of Object.entries(cases)) {
  const t0 = performance.now()
  const r = checkModel(v)
  let comp = ''
  if (r.ok) { try { compileModel(v); comp = 'compiled' } catch (e) { comp = 'ERR ' + (e as Error).message } }
  console.log(k, r.ok, r.diagnostics.length, r.diagnostics.slice(0, 2).map((d) => `${d.line}:${d.column} ${d.message}`), comp, (performance.now() - t0).toFixed(0) + 'ms')
}

import { readFileSync } from 'node:fs'
import { checkModel, compileModel } from '../shared/sheet/index'
const text = readFileSync(process.argv[2], 'utf8')
const r = checkModel(text)
console.log(JSON.stringify(r.diagnostics), r.ok)
if (r.ok) { const c = compileModel(text); console.log(c.source); const out = new Float64Array(c.nx); const u = new Float64Array(c.nu + c.nd); c.inputs.forEach((x,i)=>u[i]=x.value); u[c.nu]=288; c.rhs(0, Float64Array.from(c.states.map(s=>s.initial)), Float64Array.from(c.params.map(s=>s.value)), u, out); console.log(out) }

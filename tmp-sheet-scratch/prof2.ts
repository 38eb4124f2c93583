import { checkModel } from '../shared/sheet/index'
for (const n of [1000, 4000, 16000]) {
const v = Array.from({ length: n }, (_, i) => `param p${i} = ${i} [1] in [0, 1e6]`).join('\n') + '\nstate x = 1 [1/s]\nx\' = -p1*x\noutput y = x'
for (let k = 0; k < 2; k++) { const t0 = performance.now(); checkModel(v); console.log(n, performance.now() - t0) } }

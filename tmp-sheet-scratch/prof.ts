import { checkModel } from '../shared/sheet/index'
const v = Array.from({ length: 10000 }, (_, i) => `param p${i} = ${i} [1] in [0, 1e6]`).join('\n') + '\nstate x = 1 [1/s]\nx\' = -p1*x\noutput y = x'
for (let k = 0; k < 3; k++) { const t0 = performance.now(); checkModel(v); console.log(performance.now() - t0) }

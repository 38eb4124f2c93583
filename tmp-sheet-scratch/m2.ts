import { parse, unit } from 'mathjs'
for (const s of ['degC','degF','K','1/h','kJ/mol', 'mm', 'cm^3/min']) { const u = unit(20, s) as any; console.log(s, u.toSI().toString(), u.value) }
try { parse('1 +') } catch (e:any) { console.log(e.message, e.char) }
try { parse('a b c )') } catch (e:any) { console.log(e.message, e.char) }
console.log(JSON.stringify(parse('-2^2 - -x').toJSON()))
console.log(parse('true').type, parse('NaN').type, parse('a<b<c').type, parse('f(x)(y)').type, parse('x.y').type, parse('1 == 2').toString())
console.log(parse('x\'').type)

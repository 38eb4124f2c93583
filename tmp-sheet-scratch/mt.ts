import { parse, unit, derivative, Unit } from 'mathjs'
const n = parse('a + b*2 ? c : max(1,2,3)')
console.log(n.type, JSON.stringify(n.toJSON()).slice(0,300))
for (const s of ['m^3/s','m^2.5/s','J/(kg*K)','W/K','1','degC','W/degC','1/h','g/L','mAh','Ohm','ohm','V','kPa','bar','rad','mol/m^3','kJ/mol','L/min','m/s^2','N*s/m','%']) {
  try { const u = unit(1, s) as any; const u0 = unit(0,s) as any; console.log(s, u.value, u0.value, JSON.stringify(u.dimensions), u.units.map((x:any)=>x.unit.name+':'+x.unit.offset)) } catch (e) { console.log(s, 'ERR', (e as Error).message) }
}
try { console.log(parse('2x').toJSON()) } catch(e) { console.log((e as Error).message) }
console.log((parse('2 x') as any).implicit, (parse('5 cm') as any).type)
console.log(Object.keys(Unit.BASE_DIMENSIONS ?? {}), (Unit as any).BASE_DIMENSIONS)
console.log(derivative('tan(x)','x').toString())
try { parse('('.repeat(3000)+'1'+')'.repeat(3000)) ; console.log('deep ok')} catch(e) { console.log('deep', (e as Error).message) }

/**
 * `pewter check <sheet-file>`: parse, check units and compile a sheet; print one JSON object
 * { ok, diagnostics, states, parameters, inputs, outputs } on stdout.
 * Exit 0: no error; 1: the sheet has errors; 2: bad arguments or unreadable file.
 */
import { readFile, stat } from 'node:fs/promises'
import { checkModel, type ResolvePart, tryCompileModel } from '../../shared/sheet/index'
import { ArgError, folderLibrary, splitOption } from './args'

const USAGE = 'usage: pewter check <sheet-file> [--library DIR]\n'
const MAX_BYTES = 4 * 1024 * 1024

export async function run(args: string[]): Promise<number> {
  const files: string[] = []
  let resolvePart: ResolvePart | null = null
  try {
    for (let i = 0; i < args.length; i++) {
      const { flag, inline } = splitOption(args[i])
      if (flag === '--library') {
        const dir = inline ?? args[++i]
        if (!dir) throw new ArgError('--library needs a folder')
        resolvePart = folderLibrary(dir)
      } else if (args[i] !== '--') files.push(args[i])
    }
  } catch (e) {
    if (!(e instanceof ArgError)) throw e
    process.stderr.write(`pewter check: ${e.message}\n${USAGE}`)
    return 2
  }
  if (files.length !== 1 || files[0].startsWith('-')) {
    process.stderr.write(files.length === 0 ? `pewter check: no sheet file given\n${USAGE}` : `pewter check: expected exactly one sheet file\n${USAGE}`)
    return 2
  }
  const file = files[0]
  let text: string
  try {
    const st = await stat(file)
    if (!st.isFile()) throw new Error('not a regular file')
    if (st.size > MAX_BYTES) throw new Error(`file is larger than ${MAX_BYTES} bytes`)
    text = await readFile(file, 'utf8')
  } catch (e) {
    process.stderr.write(`pewter check: cannot read ${file}: ${e instanceof Error ? e.message : String(e)}\n`)
    return 2
  }
  const r = checkModel(text, { resolvePart })
  let ok = r.ok
  let diagnostics = r.diagnostics
  if (ok) {
    // compile as well, so that a sheet that checks clean is known to build
    const c = tryCompileModel(text, { resolvePart })
    if (!c.compiled) { ok = false; diagnostics = c.diagnostics }
  }
  const s = r.summary
  const out = {
    ok,
    diagnostics: diagnostics.map((d) => ({ line: d.line, column: d.column, endColumn: d.endColumn, severity: d.severity, message: d.message })),
    title: s.title,
    kind: s.kind,
    timeUnit: s.timeUnit,
    states: s.states.map((x) => ({ name: x.name, initial: x.initial, unit: x.unit, lower: x.lower, upper: x.upper, estimate: x.estimate, steady: x.steady })),
    parameters: s.parameters.map((p) => ({ name: p.name, value: p.value, unit: p.unit, lower: p.lower, upper: p.upper, fixed: p.fixed })),
    inputs: s.inputs.map((u) => ({ name: u.name, value: u.value, unit: u.unit, interp: u.interp })),
    outputs: s.outputs.map((o) => ({ name: o.name, unit: o.unit, sigma: o.sigma })),
    parts: s.parts.map((p) => ({ name: p.name, handle: p.handle, version: p.version })),
    partsUsed: s.partsUsed,
  }
  process.stdout.write(JSON.stringify(out, null, 2) + '\n')
  return ok ? 0 : 1
}

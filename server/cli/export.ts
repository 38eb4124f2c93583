/**
 * `pewter export <sheet> --format js|c|fmu|ss-json|ss-csv --out PATH [--set p=v …] [--input u=v …]
 *    [--at-steady | --t t] [--fit fit.json]`
 *
 * Writes an export of the sheet with its parameter values (the sheet's, a fit's shared estimates with
 * --fit, overrides with --set): an ES module (.mjs), C99 (PATH is a folder receiving <id>.c and
 * <id>.h), a source FMU for FMI 2.0 Model Exchange, or A, B, C, D as JSON or CSV (linearised as in
 * `pewter linearize`). Each carries the model version, the parameter provenance and the caution.
 * Exit 0: written; 1: the sheet has errors or cannot be exported; 2: bad arguments or files.
 */
import { mkdir, writeFile } from 'node:fs/promises'
import { join } from 'node:path'
import { SheetError } from '../../shared/sheet/index'
import { resolveValues, AnalysisInputError } from '../../shared/engine/linear/index'
import { exportFormats, type ExportFormat } from '../../shared/api/handover'
import { buildExport, exportC, exportMeta, identifierFrom } from '../../shared/export/index'
import { ArgError } from './args'
import { loadSheet, parseHandoverArgs } from './handover-args'
import { analyze } from './linearize'

const USAGE = `usage: pewter export <sheet> --format ${exportFormats.join('|')} --out PATH [--set p=v …] [--input u=v …] [--at-steady | --t t] [--fit fit.json]`

export async function run(args: string[]): Promise<number> {
  const fail = (code: number, msg: string) => {
    process.stderr.write(`pewter export: ${msg}\n${code === 2 ? `${USAGE}\n` : ''}`)
    return code
  }
  try {
    const o = parseHandoverArgs(args, true)
    if (!o.format) return fail(2, '--format is required')
    if (!(exportFormats as readonly string[]).includes(o.format)) return fail(2, `--format must be one of ${exportFormats.join(', ')}, got '${o.format}'`)
    if (!o.out) return fail(2, '--out is required')
    const format = o.format as ExportFormat
    const s = await loadSheet(o)
    const v = resolveValues(s.model, { fit: s.fit ? { result: s.fit, label: `the fit result ${o.fit}` } : null, set: o.set, inputs: o.inputs })
    const meta = exportMeta(s.model, s.label, v.provenance)
    if (format === 'c') {
      const id = identifierFrom(meta.title)
      const c = exportC(s.parsed, s.model, v.p, meta, id)
      await mkdir(o.out, { recursive: true })
      await writeFile(join(o.out, c.headerName), c.header)
      await writeFile(join(o.out, c.sourceName), c.source)
      process.stderr.write(`pewter export: wrote ${join(o.out, c.sourceName)} and ${join(o.out, c.headerName)}\n`)
      return 0
    }
    const analysis = format === 'ss-json' || format === 'ss-csv' ? analyze(o, s, 0) : undefined
    const file = buildExport({ format, parsed: s.parsed, model: s.model, p: v.p, meta, analysis })
    await writeFile(o.out, file.data)
    process.stderr.write(`pewter export: wrote ${o.out}\n`)
    return 0
  } catch (e) {
    if (e instanceof ArgError) return fail(2, e.message)
    if (e instanceof SheetError) return fail(1, e.message)
    if (e instanceof AnalysisInputError) return fail(/no (parameter|input) named|must be a finite/.test(e.message) ? 2 : 1, e.message)
    throw e
  }
}

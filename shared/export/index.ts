/**
 * Exports of a calibrated sheet: an ES module, C99 source and header, a source FMU (FMI 2.0 Model
 * Exchange), and A, B, C, D as JSON and CSV. `buildExport` picks one by format.
 */
import type { CompiledModel } from '../sheet/compiled'
import type { ParsedModel } from '../sheet/model'
import type { ExportFormat, LinearAnalysis } from '../api/handover'
import { exportEsModule } from './esm'
import { exportC } from './c99'
import { exportFmu } from './fmu'
import { stateSpaceCsv, stateSpaceJson } from './state-space'
import { identifierFrom, type ExportMeta } from './meta'
import { zipStore } from './zip'

export { exportMeta, identifierFrom, type ExportMeta } from './meta'
export { exportEsModule } from './esm'
export { exportC, cLit } from './c99'
export { exportFmu, modelDescription, fmuVariables } from './fmu'
export { stateSpaceCsv, stateSpaceJson } from './state-space'
export { zipStore, crc32 } from './zip'

export interface ExportFile {
  fileName: string
  contentType: string
  data: Uint8Array | string
}

export interface ExportInput {
  format: ExportFormat
  parsed: ParsedModel
  model: CompiledModel
  /** parameter values, internal units */
  p: Float64Array
  meta: ExportMeta
  /** needed for ss-json and ss-csv */
  analysis?: LinearAnalysis
}

/** One export as a file. The C export is a zip of the header and the source. */
export function buildExport(e: ExportInput): ExportFile {
  const id = identifierFrom(e.meta.title)
  switch (e.format) {
    case 'js':
      return { fileName: `${id}.mjs`, contentType: 'text/javascript; charset=utf-8', data: exportEsModule(e.parsed, e.model, e.p, e.meta) }
    case 'c': {
      const c = exportC(e.parsed, e.model, e.p, e.meta, id)
      return { fileName: `${id}-c99.zip`, contentType: 'application/zip', data: zipStore([{ name: c.headerName, data: c.header }, { name: c.sourceName, data: c.source }]) }
    }
    case 'fmu':
      return { fileName: `${id}.fmu`, contentType: 'application/octet-stream', data: exportFmu(e.parsed, e.model, e.p, e.meta, id).zip }
    case 'ss-json':
    case 'ss-csv': {
      if (!e.analysis) throw new Error('a state-space export needs the linear analysis')
      return e.format === 'ss-json'
        ? { fileName: `${id}-state-space.json`, contentType: 'application/json; charset=utf-8', data: stateSpaceJson(e.analysis, e.meta) }
        : { fileName: `${id}-state-space.csv`, contentType: 'text/csv; charset=utf-8', data: stateSpaceCsv(e.analysis, e.meta) }
    }
  }
}

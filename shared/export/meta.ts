/**
 * What every export carries: the model version it came from, where its parameter values came from,
 * and the caution text (shared/api/runs.ts RESULT_CAUTION).
 */
import { RESULT_CAUTION } from '../api/runs'
import type { CompiledModel } from '../sheet/compiled'

export interface ExportMeta {
  title: string
  /** e.g. "Heated buffer vessel, version 3 (workspace tinmoor, model 12)" or the sheet file's name */
  modelVersion: string
  /** hash of the sheet text */
  sheetHash: string
  /** which parameter values came from where */
  provenance: string
  caution: string
  generator: string
}

export function exportMeta(model: CompiledModel, modelVersion: string, provenance: string): ExportMeta {
  return { title: model.title, modelVersion, sheetHash: model.hash, provenance, caution: RESULT_CAUTION, generator: 'Pewter' }
}

/** the meta block as comment lines with the given prefix */
export function metaLines(meta: ExportMeta): string[] {
  return [
    `${meta.title} — exported by ${meta.generator}`,
    `Model version: ${meta.modelVersion} (sheet hash ${meta.sheetHash})`,
    `Parameter values: ${meta.provenance}`,
    meta.caution,
  ]
}

/** a C or JavaScript block comment (no comment terminator can appear in it) */
export function blockComment(lines: string[]): string {
  return ['/*', ...lines.map((l) => ` * ${l.replace(/\*\//g, '* /')}`), ' */'].join('\n')
}

/** an identifier for generated code from a title: lower case, [a-z0-9_], starting with a letter */
export function identifierFrom(text: string, fallback = 'model'): string {
  const s = text.toLowerCase().replace(/[^a-z0-9]+/g, '_').replace(/^_+|_+$/g, '').slice(0, 40)
  return /^[a-z]/.test(s) ? s : s ? `m_${s}` : fallback
}

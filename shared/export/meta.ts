/**
 * What every export carries: the model version it came from, where its parameter values came from,
 * and the caution text (shared/api/runs.ts RESULT_CAUTION).
 */
import { RESULT_CAUTION } from '../api/runs'
import type { CompiledModel } from '../sheet/compiled'
import { AnalysisInputError } from '../engine/linear/errors'

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

/**
 * The code exports carry the continuous right side only: a sheet with events or modes would lose its
 * switching without a word, so it is refused with what to do instead.
 */
export function refuseEvents(model: CompiledModel, format: string): void {
  if (model.ne === 0 && model.nm === 0) return
  const what = [model.ne > 0 ? `${model.ne} event${model.ne > 1 ? 's' : ''} (line ${model.events.map((e) => e.line).join(', ')})` : '', model.nm > 0 ? `mode${model.nm > 1 ? 's' : ''} ${model.modes.map((m) => `'${m.name}'`).join(', ')}` : ''].filter(Boolean).join(' and ')
  throw new AnalysisInputError(`the ${format} export cannot carry events: this sheet has ${what}, and the exported code would run without its switching. Simulate it in Pewter, or hand over the linear model of one mode (state space), or write the switching as smooth functions (soft_step, soft_switch) for an export`)
}

/**
 * Parts from the workspace library, as the editor and the model page use them: the texts of the
 * parts a sheet needs (the editor's live check resolves them locally), the library's models as
 * part handles (completion), and the offer to move a model's pinned parts to newer approved
 * versions with the flattened sheets before and after.
 */
import { z } from 'zod'
import { diffLine, draftDto, sheetText } from './models'

/** POST /api/workspaces/:ws/parts/texts */
export const partTextsBody = z.object({ text: sheetText })
export type PartTextsBody = z.infer<typeof partTextsBody>
/** the texts of every part the sheet needs (recursively), keyed `handle@version`; missing ones are left out */
export const partTexts = z.record(z.string(), z.string())
export const partTextsReply = z.object({ texts: partTexts })
export type PartTextsReply = z.infer<typeof partTextsReply>

/** GET /api/workspaces/:ws/parts: every model of the library as a part handle */
export const partCatalogueEntry = z.object({
  handle: z.string(),
  title: z.string(),
  latest: z.number(),
  /** the newest approved version, null when none is approved */
  latestApproved: z.number().nullable(),
})
export type PartCatalogueEntry = z.infer<typeof partCatalogueEntry>
export const partCatalogueReply = z.object({ models: z.array(partCatalogueEntry) })
export type PartCatalogueReply = z.infer<typeof partCatalogueReply>

/** One part of a model's latest version that has a newer approved version in the library. */
export const partUpdate = z.object({
  /** the part's name in the sheet */
  name: z.string(),
  handle: z.string(),
  modelId: z.number(),
  title: z.string(),
  pinned: z.number(),
  newest: z.number(),
})
export type PartUpdate = z.infer<typeof partUpdate>

const flatSide = z.object({
  /** the sheet as written */
  text: z.string(),
  /** the flattened sheet (every part's lines under its name), null when it does not flatten */
  flat: z.string().nullable(),
})

/** GET /api/workspaces/:ws/models/:id/part-updates (about the latest version) */
export const partUpdatesReply = z.object({
  version: z.number(),
  updates: z.array(partUpdate),
  before: flatSide,
  after: flatSide,
  /** line diff of the flattened sheets (before → after) */
  lines: z.array(diffLine),
  added: z.number(),
  removed: z.number(),
  /** the part texts both sides need, keyed `handle@version` (for a quick simulation of each) */
  texts: partTexts,
})
export type PartUpdatesReply = z.infer<typeof partUpdatesReply>

/** POST /api/workspaces/:ws/models/:id/part-updates: the caller's draft with the new pins */
export const acceptPartUpdatesBody = z.object({
  /** the latest version the offer was made on (refused when a newer one exists) */
  baseVersion: z.number().int().positive(),
  /** the parts to move (by name); default: every part with a newer approved version */
  parts: z.array(z.string().min(1).max(80)).max(100).optional(),
})
export type AcceptPartUpdatesBody = z.infer<typeof acceptPartUpdatesBody>
export const acceptPartUpdatesReply = z.object({ draft: draftDto, updates: z.array(partUpdate) })
export type AcceptPartUpdatesReply = z.infer<typeof acceptPartUpdatesReply>

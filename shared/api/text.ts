/**
 * Text rules shared by every name and title field, and the password length rule.
 *
 * A name must show at least one visible character and may not carry direction-control characters
 * (a right-to-left override makes "evil‮txt.exe" read as "evilexe.txt"; Unicode Technical Report #36,
 * Unicode Security Considerations, section 2.1 "Bidirectional text spoofing").
 */
import { z } from 'zod'

/** Characters that show nothing: spaces and separators (Z), controls (Cc), format characters (Cf,
 * e.g. zero-width space U+200B, word joiner U+2060, BOM U+FEFF), and the fillers that render blank
 * (Hangul fillers U+115F, U+1160, U+3164, U+FFA0; Braille blank U+2800; combining grapheme joiner U+034F). */
const INVISIBLE = /[\p{Z}\p{Cc}\p{Cf}\u115F\u1160\u3164\uFFA0\u2800]|\u034F/gu
/** Embeddings, overrides and isolates (U+202A–U+202E, U+2066–U+2069) and the marks U+200E, U+200F, U+061C. */
const DIRECTION_CONTROL = /[\u202A-\u202E\u2066-\u2069\u200E\u200F\u061C]/u

/** Why `text` is not acceptable as a name, or null. */
export function nameProblem(text: string): string | null {
  if (DIRECTION_CONTROL.test(text)) return 'contains a direction-control character (it can disguise how the text reads)'
  if (!text.replace(INVISIBLE, '').length) return 'has no visible character'
  return null
}

/**
 * A trimmed name or title of 1..max characters with at least one visible character and no
 * direction-control characters; `field` names the field in the messages ("a project name …").
 */
export function visibleText(field: string, max: number, emptyMessage = `${field} is required`) {
  return z.string().trim().min(1, emptyMessage).max(max, `${field} has at most ${max} characters`)
    .superRefine((s, ctx) => {
      // an empty value already has its own message (min)
      const problem = s.length ? nameProblem(s) : null
      if (problem) ctx.addIssue({ code: 'custom', message: `${field} ${problem}` })
    })
}

/** UTF-8 length in bytes (without TextEncoder, so shared/ stays free of platform APIs). */
export function utf8Length(s: string): number {
  let n = 0
  for (const ch of s) {
    const cp = ch.codePointAt(0)!
    n += cp < 0x80 ? 1 : cp < 0x800 ? 2 : cp < 0x10000 ? 3 : 4
  }
  return n
}

/** bcrypt reads at most 72 bytes of a password and ignores the rest (the algorithm's key schedule, Provos & Mazières 1999). */
export const PASSWORD_MAX_BYTES = 72

/**
 * Checks on an uploaded file's bytes before the CSV parser sees them: binary content, UTF-16, bytes that
 * are not UTF-8 (named by line and column), the UTF-8 byte-order mark, and leading `# …` comment lines
 * (kept as the dataset's notes: the demo files say there that their data are invented).
 */
import { badRequest, HttpError } from '../errors'
import { errorCodes } from '../../shared/api/errors'
import { splitNotes, type SplitNotes } from '../../shared/data/csv-notes'

export type DecodedUpload = SplitNotes

/** Position (1-based line, column) of a byte offset, counting lines by \n. */
function positionOf(bytes: Uint8Array, offset: number): { line: number; column: number } {
  let line = 1
  let lineStart = 0
  for (let i = 0; i < offset; i++) if (bytes[i] === 0x0a) { line++; lineStart = i + 1 }
  return { line, column: offset - lineStart + 1 }
}

/** Offset of the first byte that breaks UTF-8 (RFC 3629, Sec. 4 syntax), or -1. */
export function firstInvalidUtf8(b: Uint8Array): number {
  let i = 0
  while (i < b.length) {
    const c = b[i]
    if (c < 0x80) { i++; continue }
    let n: number
    let min: number
    if (c >= 0xc2 && c <= 0xdf) { n = 1; min = 0x80 }
    else if (c >= 0xe0 && c <= 0xef) { n = 2; min = 0x800 }
    else if (c >= 0xf0 && c <= 0xf4) { n = 3; min = 0x10000 }
    else return i
    if (i + n >= b.length) return i
    let cp = c & (0x3f >> n)
    for (let k = 1; k <= n; k++) {
      const d = b[i + k]
      if (d === undefined || (d & 0xc0) !== 0x80) return i
      cp = (cp << 6) | (d & 0x3f)
    }
    if (cp < min || cp > 0x10ffff || (cp >= 0xd800 && cp <= 0xdfff)) return i
    i += n + 1
  }
  return -1
}

export function decodeUpload(bytes: Uint8Array, filename: string): DecodedUpload {
  if (bytes.length === 0) throw badRequest(`${filename}: the file is empty`)
  if ((bytes[0] === 0xff && bytes[1] === 0xfe) || (bytes[0] === 0xfe && bytes[1] === 0xff)) {
    throw badRequest(`${filename}: the file is UTF-16 encoded; save it as UTF-8 (CSV UTF-8) and upload it again`, [{ line: 1, column: 1, message: 'UTF-16 byte-order mark' }])
  }
  const nul = bytes.indexOf(0)
  if (nul >= 0) {
    const p = positionOf(bytes, nul)
    throw badRequest(`${filename}, line ${p.line}, column ${p.column}: the file contains a NUL byte; it is not a text (CSV) file`, [{ line: p.line, column: p.column, message: 'NUL byte' }])
  }
  const bad = firstInvalidUtf8(bytes)
  if (bad >= 0) {
    const p = positionOf(bytes, bad)
    throw badRequest(
      `${filename}, line ${p.line}, column ${p.column}: byte 0x${bytes[bad].toString(16).toUpperCase().padStart(2, '0')} is not valid UTF-8 (the file may be in a legacy encoding such as Latin-1 or Windows-1252); save it as UTF-8 and upload it again`,
      [{ line: p.line, column: p.column, message: 'not UTF-8' }],
    )
  }
  let text = new TextDecoder('utf-8').decode(bytes)
  if (text.charCodeAt(0) === 0xfeff) text = text.slice(1)
  const { text: rest, notes, skippedLines: skipped } = splitNotes(text)
  if (rest.trim() === '') throw badRequest(`${filename}: the file has no header row and no data`)
  return { text: rest, notes, skippedLines: skipped }
}

const mib = (bytes: number) => `${Math.round((bytes / 1024 / 1024) * 10) / 10} MiB`

/**
 * Every error of the multipart reader (multer/busboy) as a 4xx with a message: too large (413, naming the
 * limit), a second file, a file in another field, too many fields, a malformed body (400).
 */
export function uploadError(err: unknown, limitBytes: number): HttpError {
  if (err instanceof HttpError) return err
  const e = err as { code?: string; field?: string; message?: string }
  const field = e.field ? ` '${e.field}'` : ''
  switch (e.code) {
    case 'LIMIT_FILE_SIZE':
      return new HttpError(413, errorCodes.tooLarge, `The uploaded file is larger than the limit of ${mib(limitBytes)} (${limitBytes} bytes, PEWTER_UPLOAD_LIMIT_BYTES).`)
    case 'LIMIT_FILE_COUNT':
      return badRequest("Send one file per upload: the request has more than one file (field 'file').", [{ path: 'body.file', message: 'more than one file' }])
    case 'LIMIT_UNEXPECTED_FILE':
      return e.field === 'file'
        ? badRequest("Send one file per upload: the field 'file' appears more than once.", [{ path: 'body.file', message: 'more than one file' }])
        : badRequest(`Unexpected file field${field}: send the CSV in the field 'file'.`, [{ path: `body.${e.field ?? ''}`, message: 'unexpected file field' }])
    case 'LIMIT_PART_COUNT': case 'LIMIT_FIELD_COUNT':
      return badRequest('The upload has too many fields: send the file and at most the fields name and purpose.')
    case 'LIMIT_FIELD_KEY': case 'LIMIT_FIELD_VALUE': case 'LIMIT_FIELD_NESTING': case 'LIMIT_FIELD_ARRAY_INDEX': case 'MISSING_FIELD_NAME': case 'INVALID_FIELD_NAME':
      return badRequest(`The upload's form field${field} was refused: ${e.message ?? e.code}.`)
    default:
      return badRequest(`The upload could not be read as multipart/form-data: ${e.message ?? String(err)}. Send the CSV in the field 'file'.`)
  }
}

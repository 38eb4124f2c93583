/** Pieces shared by the CLI commands' argument parsers. */
import { readFileSync, statSync } from 'node:fs'
import { join } from 'node:path'
import type { ResolvePart } from '../../shared/sheet/index'

/** A bad command line: the command prints the message (and usage) and exits with code 2. */
export class ArgError extends Error {}

/** `--flag=value` → the flag and its inline value; any other argument → itself, no inline value. */
export function splitOption(arg: string): { flag: string; inline: string | undefined } {
  const eq = arg.startsWith('--') ? arg.indexOf('=') : -1
  return eq > 0 ? { flag: arg.slice(0, eq), inline: arg.slice(eq + 1) } : { flag: arg, inline: undefined }
}

/**
 * `--library DIR`: parts are read from DIR/<handle>@<version>.sheet (e.g. gravity-tank@3.sheet).
 * The handle is restricted by the sheet grammar to letters, digits, '-' and '_', so it cannot
 * leave the folder.
 */
export function folderLibrary(dir: string): ResolvePart {
  let st
  try { st = statSync(dir) } catch { throw new ArgError(`--library: cannot read the folder ${dir}`) }
  if (!st.isDirectory()) throw new ArgError(`--library: ${dir} is not a folder`)
  return (handle, version) => {
    if (!/^[A-Za-z0-9][A-Za-z0-9_-]*$/.test(handle) || !Number.isInteger(version)) return null
    try { return readFileSync(join(dir, `${handle}@${version}.sheet`), 'utf8') } catch { return null }
  }
}

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

/** A number option's value: refused when missing, another option, or not a finite number. */
export function numberArg(flag: string, s: string | undefined): number {
  if (s === undefined || s.trim() === '' || s.startsWith('--')) throw new ArgError(`${flag} needs a number`)
  const v = Number(s)
  if (!Number.isFinite(v)) throw new ArgError(`${flag}: '${s}' is not a number`)
  return v
}

/** A text option's value (a file, a folder, a list): refused when missing or another option. */
export function textArg(flag: string, s: string | undefined, what: string): string {
  if (!s || s.startsWith('--')) throw new ArgError(`${flag} needs ${what}`)
  return s
}

const PLAIN_NAME = /^([A-Za-z_][A-Za-z0-9_]*)=(.+)$/

/** `name=value` with a number value; `pattern` captures the name and the value (default: a plain identifier). */
export function namedNumberArg(flag: string, s: string | undefined, pattern: RegExp = PLAIN_NAME): [string, number] {
  const m = s ? pattern.exec(s) : null
  if (!m) throw new ArgError(`${flag} needs name=value, got '${s ?? ''}'`)
  return [m[1], numberArg(`${flag} ${m[1]}`, m[2])]
}

/** What an option handler gets: the flag, its value (inline `--flag=value` or the next argument), the argument as typed. */
export type OptionHandler = (flag: string, next: () => string | undefined, arg: string) => boolean

/**
 * Walks a command line: each argument is offered to `option` (true: it took it); `--` is skipped; any
 * other argument starting with '-' is an unknown option; the rest are the files, returned in order.
 */
export function walkArgs(args: string[], option: OptionHandler): string[] {
  const files: string[] = []
  for (let i = 0; i < args.length; i++) {
    const a = args[i]
    const { flag, inline } = splitOption(a)
    if (flag === '--') continue
    const next = (): string | undefined => (inline !== undefined ? inline : args[++i])
    if (option(flag, next, a)) continue
    if (a.startsWith('-')) throw new ArgError(`unknown option '${a}'`)
    files.push(a)
  }
  return files
}

/** The one sheet file a command takes. */
export function oneSheetFile(files: string[]): string {
  if (files.length !== 1) throw new ArgError(files.length === 0 ? 'no sheet file given' : `expected one sheet file, got ${files.length}`)
  return files[0]
}

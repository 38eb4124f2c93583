/** Pieces shared by the CLI commands' argument parsers. */

/** A bad command line: the command prints the message (and usage) and exits with code 2. */
export class ArgError extends Error {}

/** `--flag=value` → the flag and its inline value; any other argument → itself, no inline value. */
export function splitOption(arg: string): { flag: string; inline: string | undefined } {
  const eq = arg.startsWith('--') ? arg.indexOf('=') : -1
  return eq > 0 ? { flag: arg.slice(0, eq), inline: arg.slice(eq + 1) } : { flag: arg, inline: undefined }
}

/**
 * `npm run -s pewter -- <command> …`: the command-line face of the shared sheet and engine code.
 * Each sub-command lives in its own module exporting `run(args): Promise<number>` (the exit code).
 * Static imports: scripts/pewter.mjs bundles this file ahead of time into one ESM file, and a bundle
 * of static imports is tree-shaken (lazily imported modules would be kept whole).
 */
import * as check from './check'
import * as simulate from './simulate'
import * as fit from './fit'
import * as submit from './submit'
import * as linearize from './linearize'
import * as exportCmd from './export'
import { isSegmentHelperThread } from '../jobs/segment-helper'

const commands: Record<string, () => Promise<{ run: (args: string[]) => Promise<number> }>> = {
  check: async () => check,
  simulate: async () => simulate,
  fit: async () => fit,
  submit: async () => submit,
  linearize: async () => linearize,
  export: async () => exportCmd,
}

async function main(argv: string[]): Promise<number> {
  const [name, ...rest] = argv
  const load = name ? commands[name] : undefined
  if (!load) {
    process.stderr.write(`usage: pewter <${Object.keys(commands).join('|')}> …\n`)
    return 2
  }
  return (await load()).run(rest)
}

// inside the bundle the same file starts the segment helper threads of `fit --threads` (segment-helper.ts)
if (!isSegmentHelperThread()) main(process.argv.slice(2)).then(
  (code) => { process.exitCode = code },
  (err) => { process.stderr.write(`pewter: ${err instanceof Error ? err.message : String(err)}\n`); process.exitCode = 1 },
)

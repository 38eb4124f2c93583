// The command line built ahead of time: server/cli/index.ts and everything it imports (shared code and
// packages) bundled by esbuild into one ESM file, so a command starts without transpiling TypeScript
// or loading hundreds of package modules. Rebuilt when any file that went into it is newer.
// Node built-ins only at the top: esbuild is imported only when a build is needed.
import { existsSync, mkdirSync, readFileSync, renameSync, statSync, writeFileSync } from 'node:fs'
import path from 'node:path'
import { fileURLToPath } from 'node:url'

const ROOT = path.resolve(path.dirname(fileURLToPath(import.meta.url)), '..')
export const CLI_BUNDLE = path.join(ROOT, '.pewter', 'cli', 'pewter.mjs')
const INPUTS = path.join(ROOT, '.pewter', 'cli', 'inputs.json')

function mtime(file) {
  try { return statSync(file).mtimeMs } catch { return Infinity }
}

/** True when the bundle is missing or a file that went into it (or the lock file) changed since. */
export function cliBundleStale() {
  if (!existsSync(CLI_BUNDLE) || !existsSync(INPUTS)) return true
  const built = mtime(CLI_BUNDLE)
  let inputs
  try { inputs = JSON.parse(readFileSync(INPUTS, 'utf8')) } catch { return true }
  if (!Array.isArray(inputs)) return true
  if (mtime(path.join(ROOT, 'package-lock.json')) > built) return true
  return inputs.some((f) => mtime(path.join(ROOT, f)) > built)
}

export async function buildCli() {
  const esbuild = await import('esbuild')
  mkdirSync(path.dirname(CLI_BUNDLE), { recursive: true })
  const tmp = `${CLI_BUNDLE}.${process.pid}.tmp.mjs`
  const r = await esbuild.build({
    absWorkingDir: ROOT,
    entryPoints: ['server/cli/index.ts'],
    bundle: true,
    platform: 'node',
    format: 'esm',
    target: 'node20',
    minify: true,
    // written aside and renamed: a command starting meanwhile never reads a half-written bundle
    outfile: tmp,
    metafile: true,
    logLevel: 'warning',
    // CommonJS packages inside an ESM bundle may still call require()
    banner: { js: "import { createRequire as __pewterCreateRequire } from 'node:module'; const require = __pewterCreateRequire(import.meta.url);" },
  })
  // only our own sources: packages change with the lock file, which is checked separately
  const ours = Object.keys(r.metafile.inputs).filter((f) => !f.includes('node_modules'))
  writeFileSync(`${INPUTS}.${process.pid}.tmp`, JSON.stringify(ours))
  renameSync(`${INPUTS}.${process.pid}.tmp`, INPUTS)
  renameSync(tmp, CLI_BUNDLE)
}

export async function ensureCli() {
  if (cliBundleStale()) await buildCli()
}

// `node scripts/cli-bundle.mjs`: build now (npm start and npm test do this in their bootstrap)
if (process.argv[1] && path.resolve(process.argv[1]) === fileURLToPath(import.meta.url)) {
  await buildCli()
}

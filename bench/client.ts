/**
 * `npm run bench:client [-- --no-build]`: builds the client (vite build) and prints the JavaScript a
 * browser fetches, gzip-compressed as the server sends it (zlib level 6, the compression middleware's
 * default), for the sign-in page and for the sheet editor page (Library → a sheet, with Monaco and its
 * worker). The chunks of each page come from Vite's build manifest: the entry, the page's view with
 * its static imports, and for the editor the Monaco chunks it loads at once. Targets: sign-in ≤ 250 kB,
 * editor ≤ 1.5 MB. Prints figures; asserts nothing.
 */
import { spawnSync } from 'node:child_process'
import { readFileSync, readdirSync } from 'node:fs'
import path from 'node:path'
import { gzipSync } from 'node:zlib'

interface Chunk { file: string; imports?: string[]; dynamicImports?: string[]; assets?: string[] }
type Manifest = Record<string, Chunk>

const DIST = path.resolve('dist')

if (!process.argv.includes('--no-build')) {
  const r = spawnSync('npx', ['vite', 'build', '--logLevel', 'warn'], { stdio: 'inherit' })
  if (r.status !== 0) process.exit(r.status ?? 1)
}
const manifest = JSON.parse(readFileSync(path.join(DIST, '.vite', 'manifest.json'), 'utf8')) as Manifest

/** keys of a chunk and everything it imports statically */
function closure(key: string, into = new Set<string>()): Set<string> {
  if (into.has(key) || !manifest[key]) return into
  into.add(key)
  for (const k of manifest[key].imports ?? []) closure(k, into)
  return into
}

function gz(file: string): number {
  return gzipSync(readFileSync(path.join(DIST, file)), { level: 6 }).length
}

function jsFiles(keys: Iterable<string>): Set<string> {
  const files = new Set<string>()
  for (const k of keys) {
    const c = manifest[k]
    if (c.file.endsWith('.js')) files.add(c.file)
    for (const a of c.assets ?? []) if (a.endsWith('.js')) files.add(a)
  }
  return files
}

function report(name: string, keys: Set<string>, extraFiles: string[], target: number) {
  const files = [...new Set([...jsFiles(keys), ...extraFiles])]
  const total = files.reduce((s, f) => s + gz(f), 0)
  const mark = total <= target ? 'within' : 'OVER'
  console.log(`${name.padEnd(14)} ${(total / 1024).toFixed(0).padStart(6)} kB gzip JS in ${files.length} files (target ${(target / 1024).toFixed(0)} kB: ${mark})`)
  for (const f of files.map((f) => [f, gz(f)] as const).sort((a, b) => b[1] - a[1]).slice(0, 5)) console.log(`    ${(f[1] / 1024).toFixed(0).padStart(6)} kB  ${f[0]}`)
}

const entry = Object.keys(manifest).find((k) => k === 'index.html')!
const signIn = closure('src/views/SignInView.vue', closure(entry))
report('sign-in page', signIn, [], 250 * 1024)

const editor = closure('src/views/ModelView.vue', closure('src/components/AppShell.vue', closure(entry)))
// the sheet editor component and Monaco load as soon as the page shows: follow those dynamic imports
for (let grew = true; grew;) {
  const before = editor.size
  for (const k of [...editor]) {
    for (const d of manifest[k].dynamicImports ?? []) if (/SheetEditor|useMonaco|monaco-editor/.test(d)) closure(d, editor)
  }
  grew = editor.size > before
}
// the editor's web worker is emitted as a separate file (not in the manifest's imports)
const worker = readdirSync(path.join(DIST, 'assets')).filter((f) => /editor\.worker.*\.js$/.test(f)).map((f) => `assets/${f}`)
report('editor page', editor, worker, 1536 * 1024)

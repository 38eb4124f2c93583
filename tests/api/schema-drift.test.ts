// The committed migrations describe server/db/schema.ts exactly: drizzle-kit generate, run on a copy of
// drizzle/, finds nothing to add. A schema change without its migration fails here (the fix:
// `npm run db:generate -- --name what-changed`, then commit the new file).
import { execFile } from 'node:child_process'
import { cp, mkdir, readdir, rm } from 'node:fs/promises'
import { join, relative } from 'node:path'
import { afterAll, describe, expect, it } from 'vitest'

const root = join(__dirname, '..', '..')
// drizzle-kit wants the output folder relative to the working directory
const copy = join(root, '.pewter', `schema-drift-${process.pid}`)

async function listing(dir: string): Promise<string[]> {
  const out: string[] = []
  for (const e of await readdir(dir, { withFileTypes: true, recursive: true })) if (e.isFile()) out.push(relative(dir, join(e.parentPath, e.name)))
  return out.sort()
}

afterAll(async () => { await rm(copy, { recursive: true, force: true }) })

describe('schema drift', () => {
  it('drizzle-kit generate finds no change between schema.ts and the committed migrations', async () => {
    await mkdir(copy, { recursive: true })
    await cp(join(root, 'drizzle'), copy, { recursive: true })
    const before = await listing(copy)
    const stdout = await new Promise<string>((resolve, reject) => {
      execFile(join(root, 'node_modules', '.bin', 'drizzle-kit'),
        ['generate', '--dialect', 'postgresql', '--schema', './server/db/schema.ts', '--out', `./${relative(root, copy)}`],
        { cwd: root, timeout: 120_000 }, (err, out, errOut) => (err ? reject(new Error(`${err.message}\n${errOut}`, { cause: err })) : resolve(out)))
    })
    expect(await listing(copy), 'drizzle-kit wrote a new migration: the schema changed without one').toEqual(before)
    expect(stdout).toMatch(/No schema changes/)
  })
})

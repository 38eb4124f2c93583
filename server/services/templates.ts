/**
 * Loads the template sheets shipped in models/ into every workspace (at each start, and into a new
 * workspace when it is made) as version 1 of read-only library models (fork one to change it). Runs at every start and is idempotent: a template already loaded (matched by its file name
 * in models.template) is left alone, so later starts never duplicate it, and a template added to
 * models/ later appears at the next start; a template model an admin deleted is not brought back
 * (its deletion is in the audit log). Concurrent starts are serialised by an advisory lock.
 */
import { readdirSync, readFileSync, existsSync } from 'node:fs'
import path from 'node:path'
import { fileURLToPath } from 'node:url'
import { and, eq, isNotNull, sql } from 'drizzle-orm'
import type { Pool } from 'pg'
import type { Db } from '../db/client'
import { auditLog, memberships, models, users, workspaces } from '../db/schema'
import { DEMO_WORKSPACE } from '../db/seed'
import { checkSheet } from './sheet-check'
import { insertLibraryModel } from './models'

export const templatesFolder = fileURLToPath(new URL('../../models', import.meta.url))
const LOCK_KEY = 0x7e3a_0006

export interface TemplateSheet {
  file: string
  title: string
  description: string
  tags: string[]
  text: string
}

/** The title from `model "…"`, else the file name. */
function titleOf(text: string, file: string): string {
  const m = /^\s*model\s+"([^"]+)"/m.exec(text)
  return (m?.[1] ?? file.replace(/\.sheet$/, '').replace(/[-_]+/g, ' ')).trim().slice(0, 120)
}

/** The header comment (the leading `#` lines) as the description; a `# tags: a, b` line gives tags. */
function headerOf(text: string): { description: string; tags: string[] } {
  const lines: string[] = []
  let tags: string[] = []
  for (const raw of text.replace(/\r\n?/g, '\n').split('\n')) {
    const line = raw.trim()
    if (line === '') { if (lines.length) lines.push(''); continue }
    if (!line.startsWith('#')) break
    const body = line.replace(/^#+\s?/, '')
    const t = /^tags\s*:\s*(.*)$/i.exec(body)
    if (t) { tags = t[1].split(',').map((s) => s.trim().toLowerCase()).filter((s) => /^[a-z0-9][a-z0-9 _-]*$/.test(s) && s.length <= 40); continue }
    lines.push(body)
  }
  const description = lines.join('\n').replace(/\n{3,}/g, '\n\n').trim().slice(0, 4000)
  return { description, tags }
}

export function readTemplates(folder = templatesFolder): TemplateSheet[] {
  if (!existsSync(folder)) return []
  return readdirSync(folder).filter((f) => f.endsWith('.sheet')).sort().map((file) => {
    const text = readFileSync(path.join(folder, file), 'utf8')
    const { description, tags } = headerOf(text)
    return { file, title: titleOf(text, file), description, tags: [...new Set(['template', ...tags])].slice(0, 12), text }
  })
}

/** Loads the templates into every workspace (each start): every library holds them, read-only. */
export async function loadTemplatesEverywhere(db: Db, pool: Pool, opts: { folder?: string; log?: (m: string) => void } = {}): Promise<void> {
  const all = await db.select({ slug: workspaces.slug }).from(workspaces).orderBy(workspaces.id)
  for (const w of all) await loadTemplates(db, pool, { ...opts, workspaceSlug: w.slug })
}

/**
 * Loads every template of `folder` not yet in the workspace (default: the demo workspace, owned by
 * its first admin). Returns the file names it loaded; skips (with a warning) a sheet with errors.
 */
export async function loadTemplates(db: Db, pool: Pool, opts: { workspaceSlug?: string; folder?: string; log?: (m: string) => void } = {}): Promise<string[]> {
  const templates = readTemplates(opts.folder)
  if (!templates.length) return []
  const [ws] = await db.select({ id: workspaces.id }).from(workspaces).where(eq(workspaces.slug, opts.workspaceSlug ?? DEMO_WORKSPACE.slug)).limit(1)
  if (!ws) return []
  const [owner] = await db.select({ id: users.id }).from(memberships).innerJoin(users, eq(users.id, memberships.userId))
    .where(and(eq(memberships.workspaceId, ws.id), eq(memberships.role, 'admin'))).orderBy(users.id).limit(1)
  if (!owner) return []
  const log = opts.log ?? ((m: string) => console.warn(`[pewter] ${m}`))
  const loaded: string[] = []
  const client = await pool.connect()
  try {
    await client.query('select pg_advisory_lock($1)', [LOCK_KEY])
    const have = await db.select({ t: models.template }).from(models).where(and(eq(models.workspaceId, ws.id), isNotNull(models.template)))
    const present = new Set(have.map((h) => h.t))
    // templates an admin deleted stay deleted
    const deleted = await db.select({ t: sql<string>`${auditLog.details}->>'template'` }).from(auditLog)
      .where(and(eq(auditLog.workspaceId, ws.id), eq(auditLog.action, 'model.deleted'), sql`${auditLog.details} ? 'template'`))
    for (const d of deleted) present.add(d.t)
    for (const t of templates) {
      if (present.has(t.file)) continue
      const check = checkSheet(t.text)
      if (!check.ok || !check.summary) {
        const e = check.diagnostics.find((d) => d.severity === 'error')
        log(`template ${t.file} not loaded: ${e ? `line ${e.line}, column ${e.column}: ${e.message}` : 'it does not check'}`)
        continue
      }
      await insertLibraryModel(db, ws.id, {
        title: t.title, description: t.description, tags: t.tags, text: t.text, note: `Template shipped with Pewter (models/${t.file})`,
        summary: check.summary, ownerId: owner.id, template: t.file,
      })
      loaded.push(t.file)
    }
  } finally {
    await client.query('select pg_advisory_unlock($1)', [LOCK_KEY]).catch(() => undefined)
    client.release()
  }
  return loaded
}

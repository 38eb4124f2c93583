/**
 * `npm start`: builds the client, starts a private PostgreSQL (kept in .pewter/pgdata) unless
 * DATABASE_URL is set, then runs the server (migrate, seed on first run, listen).
 */
import { spawnSync } from 'node:child_process'
import { existsSync, statSync, readdirSync } from 'node:fs'
import path from 'node:path'
import { startCluster } from './pg'

function newestMtime(dir: string): number {
  let t = 0
  for (const e of readdirSync(dir, { withFileTypes: true })) {
    const p = path.join(dir, e.name)
    t = Math.max(t, e.isDirectory() ? newestMtime(p) : statSync(p).mtimeMs)
  }
  return t
}

async function main() {
  const built = existsSync('dist/index.html') ? statSync('dist/index.html').mtimeMs : 0
  const sources = Math.max(newestMtime('src'), newestMtime('shared'), statSync('index.html').mtimeMs)
  if (process.env.PEWTER_SKIP_BUILD !== '1' && sources > built) {
    console.log('[pewter] building the client …')
    const r = spawnSync('npx', ['vite', 'build', '--logLevel', 'warn'], { stdio: 'inherit' })
    if (r.status !== 0) process.exit(r.status ?? 1)
  }
  let stop: (() => void) | null = null
  if (!process.env.DATABASE_URL) {
    const port = Number(process.env.PEWTER_PG_PORT ?? 54329)
    const cluster = await startCluster({ dataDir: path.resolve('.pewter/pgdata'), port, db: 'pewter' })
    process.env.DATABASE_URL = cluster.url
    stop = cluster.stop
  }
  // e-mail: a local fake SMTP server (generated credential) that stores every message for its
  // addressee's Mailbox page and prints its links here, unless SMTP_URL names a real relay
  let fakeSmtp: { close: () => Promise<void> } | null = null
  if (!process.env.SMTP_URL) {
    const { startFakeSmtp } = await import('../server/mail/fake-smtp')
    const smtp = await startFakeSmtp({ databaseUrl: process.env.DATABASE_URL!, port: Number(process.env.PEWTER_FAKE_SMTP_PORT ?? 2525) })
    process.env.SMTP_URL = smtp.url
    process.env.PEWTER_FAKE_SMTP = '1'
    fakeSmtp = smtp
    console.log(`[pewter] local fake SMTP server on 127.0.0.1:${smtp.port} (each user reads their own messages on the Mailbox page; links are printed here; set SMTP_URL for a real relay)`)
  }
  const { startServer } = await import('../server/index')
  const { shutdown } = await startServer()
  const bye = async () => {
    console.log('\n[pewter] stopping …')
    await shutdown().catch(() => {})
    await fakeSmtp?.close().catch(() => {})
    stop?.()
    process.exit(0)
  }
  process.on('SIGINT', bye)
  process.on('SIGTERM', bye)
}

main().catch((err) => { console.error(`[pewter] ${err instanceof Error ? err.message : err}`); process.exit(1) })

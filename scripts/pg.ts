/**
 * A private PostgreSQL cluster on 127.0.0.1 for `npm start` (kept in .pewter/pgdata) and for the tests
 * (a temporary folder, removed afterwards). Uses Debian's server binaries; installs them with apt-get
 * when they are missing. As root, the data folder is owned by `postgres` and initdb/pg_ctl run through
 * `runuser -u postgres --` (initdb refuses root).
 */
import { execFileSync, spawnSync } from 'node:child_process'
import { existsSync, mkdirSync, readdirSync, readFileSync, rmSync, chownSync, chmodSync } from 'node:fs'
import net from 'node:net'
import path from 'node:path'
import pg from 'pg'

export interface Cluster {
  url: string
  port: number
  dataDir: string
  stop: () => void
}

function findBinDir(): string | null {
  const base = '/usr/lib/postgresql'
  if (!existsSync(base)) return null
  const versions = readdirSync(base).filter((v) => existsSync(path.join(base, v, 'bin', 'initdb'))).sort((a, b) => Number(b) - Number(a))
  return versions.length ? path.join(base, versions[0], 'bin') : null
}

export function ensurePostgresInstalled(): string {
  let bin = findBinDir()
  if (bin) return bin
  console.log('[pewter] PostgreSQL server binaries not found: installing Debian package postgresql …')
  const env = { ...process.env, DEBIAN_FRONTEND: 'noninteractive' }
  const sudo = process.getuid && process.getuid() !== 0 ? ['sudo'] : []
  const run = (args: string[]) => {
    const r = spawnSync(sudo.length ? 'sudo' : args[0], sudo.length ? args : args.slice(1), { stdio: 'inherit', env })
    if (r.status !== 0) throw new Error(`'${args.join(' ')}' failed (exit ${r.status}); install PostgreSQL 15 by hand or set DATABASE_URL`)
  }
  run(['apt-get', 'update'])
  run(['apt-get', 'install', '-y', 'postgresql'])
  bin = findBinDir()
  if (!bin) throw new Error('PostgreSQL was installed but no initdb was found under /usr/lib/postgresql')
  return bin
}

const isRoot = () => typeof process.getuid === 'function' && process.getuid() === 0

function asOwner(cmd: string, args: string[]) {
  const full = isRoot() ? ['runuser', ['-u', 'postgres', '--', cmd, ...args]] as const : [cmd, args] as const
  const r = spawnSync(full[0], [...full[1]], { encoding: 'utf8' })
  return r
}

export function portInUse(port: number): Promise<boolean> {
  return new Promise((resolve) => {
    const s = net.createServer()
    s.once('error', () => resolve(true))
    s.once('listening', () => s.close(() => resolve(false)))
    s.listen(port, '127.0.0.1')
  })
}

export async function freePort(): Promise<number> {
  return new Promise((resolve, reject) => {
    const s = net.createServer()
    s.once('error', reject)
    s.listen(0, '127.0.0.1', () => {
      const a = s.address()
      const port = typeof a === 'object' && a ? a.port : 0
      s.close(() => resolve(port))
    })
  })
}

/** Start (initialising when needed) a cluster in dataDir listening on 127.0.0.1:port; creates database `db`. */
export async function startCluster(opts: { dataDir: string; port: number; db: string; quiet?: boolean }): Promise<Cluster> {
  const bin = ensurePostgresInstalled()
  const { dataDir, port, db } = opts
  const log = (m: string) => { if (!opts.quiet) console.log(`[pewter] ${m}`) }
  if (!existsSync(path.join(dataDir, 'PG_VERSION'))) {
    mkdirSync(dataDir, { recursive: true })
    if (isRoot()) chownSync(dataDir, uid('postgres'), gid('postgres'))
    chmodSync(dataDir, 0o700)
    const r = asOwner(path.join(bin, 'initdb'), ['-D', dataDir, '-U', 'postgres', '--auth=trust', '-E', 'UTF8', '--no-instructions'])
    if (r.status !== 0) throw new Error(`initdb failed in ${dataDir}:\n${r.stderr || r.stdout}`)
    log(`initialised a PostgreSQL cluster in ${dataDir}`)
  }
  const pidFile = path.join(dataDir, 'postmaster.pid')
  let running = false
  if (existsSync(pidFile)) {
    const status = asOwner(path.join(bin, 'pg_ctl'), ['-D', dataDir, 'status'])
    if (status.status === 0) {
      const lines = readFileSync(pidFile, 'utf8').split('\n')
      if (Number(lines[3]) === port) running = true
      else throw new Error(`a PostgreSQL server is already running on ${dataDir} with port ${lines[3]}; stop it (pg_ctl -D ${dataDir} stop) or use that port`)
    } else {
      log(`removing a stale lock file ${pidFile} (no server is running)`)
      rmSync(pidFile, { force: true })
    }
  }
  if (!running) {
    if (await portInUse(port)) throw new Error(`port ${port} on 127.0.0.1 is already in use: set PEWTER_PG_PORT to a free port or stop what listens there`)
    const logFile = path.join(dataDir, 'server.log')
    const r = asOwner(path.join(bin, 'pg_ctl'), ['-D', dataDir, '-l', logFile, '-t', '60', '-w', '-o', `-k /tmp -h 127.0.0.1 -p ${port} -c fsync=${opts.quiet ? 'off' : 'on'}`, 'start'])
    if (r.status !== 0) {
      const tail = existsSync(logFile) ? readFileSync(logFile, 'utf8').split('\n').slice(-15).join('\n') : ''
      throw new Error(`PostgreSQL did not start on 127.0.0.1:${port}:\n${r.stderr || r.stdout}\n${tail}`)
    }
    log(`PostgreSQL listening on 127.0.0.1:${port}`)
  }
  const exists = spawnSync('psql', ['-h', '127.0.0.1', '-p', String(port), '-U', 'postgres', '-tAc', `SELECT 1 FROM pg_database WHERE datname='${db}'`], { encoding: 'utf8' })
  if (exists.status !== 0) throw new Error(`cannot reach PostgreSQL on 127.0.0.1:${port}: ${exists.stderr}`)
  if (exists.stdout.trim() !== '1') {
    execFileSync('createdb', ['-h', '127.0.0.1', '-p', String(port), '-U', 'postgres', db])
    log(`created database ${db}`)
  }
  return {
    url: `postgres://postgres@127.0.0.1:${port}/${db}`,
    port,
    dataDir,
    stop: () => { asOwner(path.join(bin, 'pg_ctl'), ['-D', dataDir, '-m', 'fast', '-w', 'stop']) },
  }
}

function uid(name: string): number {
  return Number(execFileSync('id', ['-u', name], { encoding: 'utf8' }).trim())
}
function gid(name: string): number {
  return Number(execFileSync('id', ['-g', name], { encoding: 'utf8' }).trim())
}

/** Creates the database `name` (a plain identifier) in the cluster of `adminUrl`; returns its URL. */
export async function createDatabase(adminUrl: string, name: string): Promise<string> {
  const admin = new pg.Client({ connectionString: adminUrl })
  await admin.connect()
  try {
    await admin.query(`CREATE DATABASE ${name}`)
  } finally {
    await admin.end()
  }
  const u = new URL(adminUrl)
  u.pathname = `/${name}`
  return u.toString()
}

/**
 * `pewter submit …`: start a fit on a running Pewter server with an API token (create one on the Team
 * page; it is bound to one workspace and acts with its role). The token comes from PEWTER_TOKEN (or
 * --token, which other users of the machine may see in the process list); the server from
 * PEWTER_SERVER or --server. With --wait it follows the run and prints the result JSON with --json.
 * Exit codes: 0 queued (or, with --wait, succeeded), 1 the fit failed or was cancelled, 2 bad
 * arguments, 3 the server refused or could not be reached.
 */
import { readFile } from 'node:fs/promises'
import { basename } from 'node:path'
import { terminalStatuses, type RunStatus } from '../../shared/api/runs'
import { describeOutcome } from '../../shared/api/fit'

const USAGE = `usage: pewter submit --workspace <slug> --project <id> --model <id> --version <n>
  (--estimation <datasetId,…> | --upload <estimation.csv>…) [--validation <datasetId,…>] [--upload-validation <v.csv>…]
  [--method lm|nelder-mead] [--starts N] [--weighting sheet|equal|normalized|ml] [--seed n] [--name text]
  [--server URL] [--token TOKEN] [--wait] [--json]
  environment: PEWTER_TOKEN (API token), PEWTER_SERVER (default http://127.0.0.1:3000)`

class ArgError extends Error {}
class ServerError extends Error {}

export interface SubmitArgs {
  server: string
  token: string
  workspace: string
  project: number
  model: number
  version: number
  estimation: number[]
  validation: number[]
  upload: string[]
  uploadValidation: string[]
  method?: string
  starts?: number
  weighting?: string
  seed?: number
  name?: string
  wait: boolean
  json: boolean
}

const int = (flag: string, v: string | undefined) => {
  if (v === undefined || !/^\d+$/.test(v)) throw new ArgError(`${flag}: expected a whole number, got '${v ?? ''}'`)
  return Number(v)
}
const ids = (flag: string, v: string | undefined) => (v ?? '').split(',').filter(Boolean).map((x) => int(flag, x.trim()))

export function parseSubmitArgs(argv: string[], env: NodeJS.ProcessEnv = process.env): SubmitArgs {
  const a: SubmitArgs = {
    server: env.PEWTER_SERVER ?? 'http://127.0.0.1:3000', token: env.PEWTER_TOKEN ?? '', workspace: '', project: 0, model: 0, version: 0,
    estimation: [], validation: [], upload: [], uploadValidation: [], wait: false, json: false,
  }
  for (let i = 0; i < argv.length; i++) {
    const arg = argv[i]
    const eq = arg.indexOf('=')
    const [flag, inline] = arg.startsWith('--') && eq > 0 ? [arg.slice(0, eq), arg.slice(eq + 1)] : [arg, undefined]
    const value = () => {
      const v = inline ?? argv[++i]
      if (v === undefined) throw new ArgError(`${flag}: a value is missing`)
      return v
    }
    switch (flag) {
      case '--server': a.server = value(); break
      case '--token': a.token = value(); break
      case '--workspace': a.workspace = value(); break
      case '--project': a.project = int(flag, value()); break
      case '--model': a.model = int(flag, value()); break
      case '--version': a.version = int(flag, value()); break
      case '--estimation': a.estimation.push(...ids(flag, value())); break
      case '--validation': a.validation.push(...ids(flag, value())); break
      case '--upload': a.upload.push(value()); break
      case '--upload-validation': a.uploadValidation.push(value()); break
      case '--method': a.method = value(); break
      case '--starts': a.starts = int(flag, value()); break
      case '--weighting': a.weighting = value(); break
      case '--seed': a.seed = int(flag, value()); break
      case '--name': a.name = value(); break
      case '--wait': a.wait = true; break
      case '--json': a.json = true; break
      default: throw new ArgError(`unknown argument '${arg}'`)
    }
  }
  const missing = [
    !a.workspace && '--workspace', !a.project && '--project', !a.model && '--model', !a.version && '--version',
  ].filter(Boolean)
  if (missing.length) throw new ArgError(`missing ${missing.join(', ')}`)
  if (!a.estimation.length && !a.upload.length) throw new ArgError('name the estimation data: --estimation <datasetId,…> or --upload <file.csv>')
  if (!a.token) throw new ArgError('no API token: set PEWTER_TOKEN (or pass --token); create one on the Team page')
  if (!/^https?:\/\//.test(a.server)) throw new ArgError(`--server: '${a.server}' is not an http(s) URL`)
  a.server = a.server.replace(/\/$/, '')
  return a
}

export interface SubmitIo {
  fetch: typeof fetch
  out: (s: string) => void
  err: (s: string) => void
  sleep: (ms: number) => Promise<void>
}

const defaultIo: SubmitIo = {
  fetch: (...args) => fetch(...args),
  out: (s) => { process.stdout.write(s) },
  err: (s) => { process.stderr.write(s) },
  sleep: (ms) => new Promise((r) => setTimeout(r, ms)),
}

async function call<T>(io: SubmitIo, a: SubmitArgs, method: string, path: string, body?: unknown | FormData): Promise<T> {
  const url = `${a.server}/api/workspaces/${encodeURIComponent(a.workspace)}${path}`
  let res: Response
  try {
    res = await io.fetch(url, {
      method,
      headers: { Authorization: `Bearer ${a.token}`, Accept: 'application/json', ...(body && !(body instanceof FormData) ? { 'Content-Type': 'application/json' } : {}) },
      body: body === undefined ? undefined : body instanceof FormData ? body : JSON.stringify(body),
    })
  } catch (e) {
    throw new ServerError(`cannot reach ${a.server}: ${e instanceof Error ? e.message : e}`)
  }
  const text = await res.text()
  let json: unknown = null
  try { json = text ? JSON.parse(text) : null } catch { /* not JSON */ }
  if (!res.ok) {
    const e = (json as { error?: { message?: string; details?: { path: string; message: string }[] } } | null)?.error
    const details = e?.details?.length ? ` (${e.details.map((d) => `${d.path}: ${d.message}`).join('; ')})` : ''
    throw new ServerError(`${method} ${path}: HTTP ${res.status}: ${e?.message ?? (text.slice(0, 200) || res.statusText)}${details}`)
  }
  return json as T
}

async function upload(io: SubmitIo, a: SubmitArgs, file: string, purpose: 'estimation' | 'validation'): Promise<number> {
  const bytes = await readFile(file).catch((e) => { throw new ArgError(`${file}: ${e instanceof Error ? e.message : e}`) })
  const form = new FormData()
  form.append('file', new Blob([bytes], { type: 'text/csv' }), basename(file))
  form.append('purpose', purpose)
  const ds = await call<{ id: number; warnings?: string[] }>(io, a, 'POST', `/projects/${a.project}/datasets`, form)
  io.err(`uploaded ${basename(file)} as dataset ${ds.id}\n`)
  return ds.id
}

export async function submit(a: SubmitArgs, io: SubmitIo = defaultIo): Promise<number> {
  const estimation = [...a.estimation]
  for (const f of a.upload) estimation.push(await upload(io, a, f, 'estimation'))
  const validation = [...a.validation]
  for (const f of a.uploadValidation) validation.push(await upload(io, a, f, 'validation'))
  const body: Record<string, unknown> = { modelId: a.model, version: a.version, estimation, validation }
  if (a.method) body.method = a.method
  if (a.starts) body.starts = a.starts
  if (a.weighting) body.weighting = a.weighting
  if (a.seed !== undefined) body.seed = a.seed
  if (a.name) body.name = a.name
  const run = await call<{ id: number; status: string }>(io, a, 'POST', `/projects/${a.project}/runs`, body)
  io.err(`run ${run.id} queued: ${a.server}/w/${a.workspace}/runs/${run.id}\n`)
  if (!a.wait) {
    io.out(a.json ? `${JSON.stringify({ id: run.id, status: run.status })}\n` : `${run.id}\n`)
    return 0
  }
  let last = ''
  for (;;) {
    const r = await call<{ id: number; status: RunStatus; outcome?: string | null; convergedBy?: string | null; error: string | null; progress: { message?: string } | null; result: unknown }>(io, a, 'GET', `/runs/${run.id}`)
    const line = `${r.status}${r.progress?.message ? `: ${r.progress.message}` : ''}`
    if (line !== last) { io.err(`run ${run.id} ${line}\n`); last = line }
    if (terminalStatuses.includes(r.status)) {
      if (a.json) io.out(`${JSON.stringify(r.status === 'succeeded' ? r.result : { id: r.id, status: r.status, error: r.error }, null, 2)}\n`)
      else io.out(`run ${r.id} ${r.status === 'succeeded' ? 'finished' : r.status}${r.outcome ? `, optimiser ${describeOutcome(r.outcome, r.convergedBy)}` : ''}${r.error ? `: ${r.error}` : ''}\n`)
      return r.status === 'succeeded' ? 0 : 1
    }
    await io.sleep(1000)
  }
}

export async function run(argv: string[], io: SubmitIo = defaultIo, env: NodeJS.ProcessEnv = process.env): Promise<number> {
  try {
    return await submit(parseSubmitArgs(argv, env), io)
  } catch (e) {
    if (e instanceof ArgError) { io.err(`pewter submit: ${e.message}\n${USAGE}\n`); return 2 }
    if (e instanceof ServerError) { io.err(`pewter submit: ${e.message}\n`); return 3 }
    throw e
  }
}

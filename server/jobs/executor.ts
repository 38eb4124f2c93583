/**
 * What actually runs a fit: a function with the signature of `executeRun` in
 * server/services/fit-execution.ts (load the run, fit, write progress to the run row, poll its cancel
 * flag, store result and status). The pool and the worker process load it by module path inside each
 * worker thread, so another module with the same export can be named (PEWTER_RUN_EXECUTOR; the job
 * tests use a small executor of their own).
 */
import type { Db } from '../db/client'
import type { FitOptions } from '../../shared/engine/fit/driver'

export interface ExecuteOptions {
  /** aborted when the run is cancelled or times out */
  signal?: AbortSignal
  /** who executes it (written to the run row by the claim) */
  workerId?: string
  /** runs a multi-start fit's starts over the pool's threads (FitOptions.runStarts) */
  runStarts?: FitOptions['runStarts']
}

export type RunExecutor = (db: Db, runId: number, opts: ExecuteOptions) => Promise<unknown>

export const defaultExecutorModule = new URL('../services/fit-execution.ts', import.meta.url).href

/** Resolves a module path or file URL (relative paths from the working directory) to a file URL. */
export function executorUrl(spec: string | undefined): string {
  if (!spec) return defaultExecutorModule
  if (/^file:/.test(spec)) return spec
  return new URL(spec, `file://${process.cwd()}/`).href
}

/**
 * Imports the executor module. Inside a worker thread whose TypeScript support came through tsx's
 * require hook only (Node 20 worker threads), a plain import() of a .ts file fails; tsx's scoped
 * tsImport loads it then.
 */
export async function loadExecutor(url: string): Promise<RunExecutor> {
  let mod: { executeRun?: RunExecutor; default?: { executeRun?: RunExecutor } }
  try {
    mod = await import(/* @vite-ignore */ url)
  } catch (err) {
    if ((err as { code?: string }).code !== 'ERR_UNKNOWN_FILE_EXTENSION') throw err
    const { tsImport } = await import('tsx/esm/api')
    mod = await tsImport(url, import.meta.url)
  }
  const fn = mod.executeRun ?? mod.default?.executeRun
  if (typeof fn !== 'function') throw new Error(`${url} does not export executeRun(db, runId, opts)`)
  return fn
}

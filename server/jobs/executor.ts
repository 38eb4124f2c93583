/**
 * What actually runs a fit: a function with the signature of `executeRun` in
 * server/services/fit-execution.ts (load the run, fit, write progress to the run row, poll its cancel
 * flag, store result and status). The pool and the worker process load it by module path inside each
 * worker thread, so another module with the same export can be named (PEWTER_RUN_EXECUTOR; the job
 * tests use a small executor of their own).
 */
import type { Db } from '../db/client'

export interface ExecuteOptions {
  /** aborted when the run is cancelled or times out */
  signal?: AbortSignal
  /** who executes it (written to the run row by the claim) */
  workerId?: string
}

export type RunExecutor = (db: Db, runId: number, opts: ExecuteOptions) => Promise<unknown>

export const defaultExecutorModule = new URL('../services/fit-execution.ts', import.meta.url).href

/** Resolves a module path or file URL (relative paths from the working directory) to a file URL. */
export function executorUrl(spec: string | undefined): string {
  if (!spec) return defaultExecutorModule
  if (/^file:/.test(spec)) return spec
  return new URL(spec, `file://${process.cwd()}/`).href
}

export async function loadExecutor(url: string): Promise<RunExecutor> {
  const mod = (await import(/* @vite-ignore */ url)) as { executeRun?: RunExecutor; default?: { executeRun?: RunExecutor } }
  const fn = mod.executeRun ?? mod.default?.executeRun
  if (typeof fn !== 'function') throw new Error(`${url} does not export executeRun(db, runId, opts)`)
  return fn
}

/** Starting worker threads that run our TypeScript sources. */
import { createRequire } from 'node:module'
import { pathToFileURL } from 'node:url'

/** tsx's loader for the worker threads (already present when the process itself runs under tsx) */
export function threadExecArgv(): string[] {
  if (process.execArgv.some((a) => a.includes('tsx'))) return process.execArgv
  const loader = pathToFileURL(createRequire(import.meta.url).resolve('tsx')).href
  return ['--import', loader]
}

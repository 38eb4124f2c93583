import type { z } from 'zod'
import { HttpError } from '../errors'
import { errorCodes } from '../../shared/api/errors'

/** Parses a value with a zod schema; failure → 400 listing each issue with its field path. */
export function parse<S extends z.ZodType>(schema: S, value: unknown, where: 'body' | 'query' | 'params' = 'body'): z.infer<S> {
  const r = schema.safeParse(value)
  if (r.success) return r.data
  const details = r.error.issues.map((i) => ({ path: [where, ...i.path.map(String)].join('.'), message: i.message }))
  throw new HttpError(400, errorCodes.validation, `Invalid ${where}: ${details.map((d) => `${d.path}: ${d.message}`).join('; ')}`, details)
}

/** A positive integer route parameter, e.g. `intParam(req.params, 'pid')`; 400 naming it otherwise. */
export function intParam(params: Record<string, unknown>, name: string): number {
  const v = params[name]
  const n = typeof v === 'string' && /^\d+$/.test(v) ? Number(v) : NaN
  if (!Number.isSafeInteger(n) || n <= 0) {
    throw new HttpError(400, errorCodes.validation, `Invalid params: params.${name}: expected a positive integer`, [{ path: `params.${name}`, message: 'expected a positive integer' }])
  }
  return n
}

import { z } from 'zod'

/** Every API error has this shape, whatever the status. */
export const apiErrorReply = z.object({
  error: z.object({
    code: z.string(),
    message: z.string(),
    details: z.unknown().optional(),
  }),
})

export const errorCodes = {
  badRequest: 'bad_request',
  validation: 'validation_failed',
  unauthenticated: 'unauthenticated',
  forbidden: 'forbidden',
  notFound: 'not_found',
  conflict: 'conflict',
  /** a single-use or expiring link that was used or expired */
  gone: 'gone',
  tooLarge: 'payload_too_large',
  rateLimited: 'rate_limited',
  internal: 'internal_error',
  /** the Host header names a host this server does not answer to */
  misdirected: 'misdirected_request',
  /** the database is away (restart, network): retry shortly */
  unavailable: 'service_unavailable',
  /** a request's work passed a size or time limit (the message names it) */
  limit: 'limit_exceeded',
} as const

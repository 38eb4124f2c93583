import type { ErrorRequestHandler, RequestHandler } from 'express'
import { HttpError } from '../errors'
import { databaseUnavailable } from '../db/resilience'
import { errorCodes } from '../../shared/api/errors'

export const notFoundHandler: RequestHandler = (_req, res) => {
  res.status(404).json({ error: { code: errorCodes.notFound, message: 'No such API route.' } })
}

/** Every error becomes JSON `{ error: { code, message, details? } }`; 500s never carry a stack. */
export const errorHandler: ErrorRequestHandler = (err, req, res, _next) => {
  if (err instanceof HttpError) {
    res.status(err.status).json({ error: { code: err.code, message: err.message, ...(err.details !== undefined ? { details: err.details } : {}) } })
    return
  }
  const e = err as { type?: string; status?: number; code?: string; message?: string; field?: string }
  if (e?.type === 'entity.too.large' || e?.code === 'LIMIT_FILE_SIZE') {
    res.status(413).json({ error: { code: errorCodes.tooLarge, message: e.code === 'LIMIT_FILE_SIZE' ? 'The uploaded file is larger than the size limit.' : 'The request body is larger than the size limit.' } })
    return
  }
  if (e?.type === 'entity.parse.failed') {
    res.status(400).json({ error: { code: errorCodes.badRequest, message: 'The request body is not valid JSON.' } })
    return
  }
  if (typeof e?.status === 'number' && e.status >= 400 && e.status < 500) {
    res.status(e.status).json({ error: { code: errorCodes.badRequest, message: e.message ?? 'Bad request.' } })
    return
  }
  if (databaseUnavailable(err)) {
    res.status(503).json({ error: { code: errorCodes.unavailable, message: 'The database is unreachable at the moment; try again shortly (GET /api/health tells when it is back).' } })
    return
  }
  if (process.env.NODE_ENV !== 'test' || process.env.PEWTER_LOG_ERRORS) console.error(`[pewter] ${req.method} ${req.originalUrl}:`, err)
  res.status(500).json({ error: { code: errorCodes.internal, message: 'Something went wrong on the server.' } })
}


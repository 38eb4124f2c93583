import type { RequestHandler } from 'express'
import { HttpError } from '../errors'
import { errorCodes } from '../../shared/api/errors'

const SAFE = new Set(['GET', 'HEAD', 'OPTIONS'])
export const CSRF_HEADER = 'x-requested-with'
export const CSRF_VALUE = 'pewter'

/**
 * CSRF defence for cookie-authenticated state-changing requests: the Origin (when sent) must be our own,
 * and the request must carry the custom header `X-Requested-With: pewter`, which a cross-site form cannot
 * set and a cross-site script cannot send without a CORS preflight we never grant. Bearer-token requests
 * carry no ambient credentials and are exempt.
 */
export function csrfGuard(allowedOrigins: string[]): RequestHandler {
  const allowed = new Set(allowedOrigins.map((o) => o.replace(/\/$/, '')))
  return (req, _res, next) => {
    if (SAFE.has(req.method)) return next()
    if (req.headers.authorization?.startsWith('Bearer ')) return next()
    const origin = req.headers.origin
    if (origin) {
      const own = `${req.protocol}://${req.headers.host}`
      if (origin !== own && !allowed.has(origin)) {
        return next(new HttpError(403, errorCodes.forbidden, `Cross-site request refused: origin ${origin} is not this site.`))
      }
    } else if (req.headers['sec-fetch-site'] === 'cross-site') {
      return next(new HttpError(403, errorCodes.forbidden, 'Cross-site request refused.'))
    }
    if (req.headers[CSRF_HEADER] !== CSRF_VALUE) {
      return next(new HttpError(403, errorCodes.forbidden, `State-changing requests must send the header X-Requested-With: ${CSRF_VALUE}.`))
    }
    next()
  }
}

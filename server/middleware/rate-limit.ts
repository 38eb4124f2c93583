import { rateLimit } from 'express-rate-limit'
import { errorCodes } from '../../shared/api/errors'

/** Limits attempts per client address on the sign-in, sign-up and password-reset routes (429 past it). */
export function authAttemptLimiter(limitPerWindow: number, windowMs = 15 * 60 * 1000) {
  return rateLimit({
    windowMs,
    limit: limitPerWindow,
    standardHeaders: 'draft-8',
    legacyHeaders: false,
    handler: (_req, res) => {
      res.status(429).json({ error: { code: errorCodes.rateLimited, message: 'Too many attempts. Wait a few minutes and try again.' } })
    },
  })
}

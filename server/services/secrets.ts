/**
 * One-time secrets (invitation, password-reset and API tokens): 32 random bytes, base64url, with a
 * short readable prefix; only their SHA-256 is stored, so a database leak reveals no usable token.
 * (SHA-256 without salt suffices for 256-bit random secrets: common practice, no source.)
 */
import { createHash, randomBytes } from 'node:crypto'
import { HttpError } from '../errors'
import { errorCodes } from '../../shared/api/errors'

export const newSecret = (prefix: string) => `${prefix}_${randomBytes(32).toString('base64url')}`
export const hashSecret = (token: string) => createHash('sha256').update(token, 'utf8').digest('hex')

/** 410 for a one-time link (invitation, verification, password reset) that was used, revoked or has expired. */
export const tokenGone = (what: string) => new HttpError(410, errorCodes.gone, `This ${what} link has already been used or has expired. Ask for a new one.`)

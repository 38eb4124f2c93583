import bcrypt from 'bcryptjs'
import { dictionary } from '@zxcvbn-ts/language-common'
import { HttpError } from '../errors'
import { errorCodes } from '../../shared/api/errors'

/**
 * bcrypt cost factor: 12 by default (OWASP Password Storage Cheat Sheet recommends at least 10; 12 is
 * common practice for interactive sign-in, no source for the exact figure). PEWTER_BCRYPT_COST may
 * lower it for the test suite only (never below 4, bcrypt's minimum); production keeps 12.
 */
export function bcryptCost(env: NodeJS.ProcessEnv = process.env): number {
  const asked = Number(env.PEWTER_BCRYPT_COST)
  return env.NODE_ENV === 'test' && Number.isInteger(asked) && asked >= 4 && asked <= 12 ? asked : 12
}
export const BCRYPT_COST = bcryptCost()

export const hashPassword = (password: string) => bcrypt.hash(password, BCRYPT_COST)
export const verifyPassword = (password: string, hash: string) => bcrypt.compare(password, hash)

/** A hash to compare against when the e-mail is unknown, so both paths take the same time. */
export const DUMMY_HASH = bcrypt.hashSync('pewter-no-such-user', BCRYPT_COST)

/** The most common passwords, lower-cased (the list of @zxcvbn-ts/language-common, ~49 000 entries). */
const COMMON = new Set(dictionary['passwords-common'].map((p) => p.toLowerCase()))

export const isCommonPassword = (password: string) => COMMON.has(password.toLowerCase())

/** 400 naming `path` when the password is one of the most common ones (checked server-side: the list is large). */
export function assertUncommonPassword(password: string, path = 'body.password') {
  if (!isCommonPassword(password)) return
  const message = 'this password is one of the most common ones and is guessed first; choose another'
  throw new HttpError(400, errorCodes.validation, `Invalid body: ${path}: ${message}`, [{ path, message }])
}

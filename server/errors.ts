import { errorCodes } from '../shared/api/errors'

/** An error with an HTTP status that the error middleware turns into `{ error: { code, message, details } }`. */
export class HttpError extends Error {
  constructor(public status: number, public code: string, message: string, public details?: unknown) {
    super(message)
  }
}

export const badRequest = (message: string, details?: unknown) => new HttpError(400, errorCodes.badRequest, message, details)
export const unauthenticated = (message = 'Sign in first.') => new HttpError(401, errorCodes.unauthenticated, message)
export const forbidden = (message = 'Your role does not allow this.') => new HttpError(403, errorCodes.forbidden, message)
export const notFound = (what = 'Resource') => new HttpError(404, errorCodes.notFound, `${what} not found.`)
export const conflict = (message: string, details?: unknown) => new HttpError(409, errorCodes.conflict, message, details)

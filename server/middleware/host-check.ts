/**
 * DNS-rebinding defence: a page on another site that re-points its own name at 127.0.0.1 reaches a
 * local Pewter with that foreign name in the Host header. Only PUBLIC_URL's host name and loopback
 * names are served; anything else answers 421 Misdirected Request (RFC 9110, section 15.5.20).
 */
import type { RequestHandler } from 'express'
import { HttpError } from '../errors'
import { errorCodes } from '../../shared/api/errors'
import { isLoopbackHost } from '../startup-policy'

/** The host name of a Host header value ("example.org:8080" → "example.org", "[::1]:3000" → "::1"). */
export function hostName(header: string): string {
  const h = header.trim().toLowerCase()
  if (h.startsWith('[')) return h.slice(1, h.indexOf(']') > 0 ? h.indexOf(']') : undefined)
  return h.replace(/:\d+$/, '')
}

export function hostCheck(publicUrl: () => string): RequestHandler {
  return (req, _res, next) => {
    const header = req.headers.host ?? ''
    const name = hostName(header)
    let own = ''
    try { own = new URL(publicUrl()).hostname.toLowerCase().replace(/^\[|\]$/g, '') } catch { /* an unparsable PUBLIC_URL leaves loopback only */ }
    if (name && (name === own || isLoopbackHost(name))) return next()
    next(new HttpError(421, errorCodes.misdirected, `This server answers only to ${own || 'its loopback address'} and loopback addresses; the request named host "${header}". Set PUBLIC_URL to the address users reach.`))
  }
}

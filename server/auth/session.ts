import session from 'express-session'
import connectPgSimple from 'connect-pg-simple'
import type pg from 'pg'
import type { Config } from '../config'

export const SESSION_COOKIE = 'pewter.sid'

export function sessionMiddleware(pool: pg.Pool, config: Config) {
  const Store = connectPgSimple(session)
  return session({
    name: SESSION_COOKIE,
    store: new Store({ pool, tableName: 'user_sessions', createTableIfMissing: false, pruneSessionInterval: 60 * 15 }),
    secret: config.sessionSecret,
    resave: false,
    saveUninitialized: false,
    rolling: true,
    proxy: config.trustProxy,
    cookie: {
      httpOnly: true,
      sameSite: 'lax',
      // secure behind HTTPS: 'auto' marks the cookie secure when the request came over TLS (via the proxy)
      secure: config.trustProxy ? 'auto' : false,
      maxAge: 1000 * 60 * 60 * 24 * 7,
    },
  })
}

import type { Request } from 'express'
import type { Config } from './config'
import type { Database, Db } from './db/client'

/**
 * What the routes and services share: the database, the configuration and the optional services
 * (job runner, mailer) attached by the server start-up. Stored on `app.locals.ctx`.
 */
export interface AppContext {
  config: Config
  database: Database
  db: Db
  /** attached by later layers (jobs, mail); typed loosely here to keep this module dependency-free */
  services: Record<string, unknown>
}

export const ctx = (req: Request): AppContext => req.app.locals.ctx as AppContext

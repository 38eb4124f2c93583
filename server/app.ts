/**
 * Builds the Express application without listening (tests import it; server/index.ts listens).
 */
import express from 'express'
import helmet from 'helmet'
import compression from 'compression'
import { existsSync } from 'node:fs'
import path from 'node:path'
import { fileURLToPath } from 'node:url'
import type { AppContext } from './context'
import { sessionMiddleware } from './auth/session'
import { csrfGuard } from './auth/csrf'
import { resolveAuth } from './middleware/auth'
import { hostCheck } from './middleware/host-check'
import { errorHandler, notFoundHandler } from './middleware/errors'
import { apiRouter } from './routes'
import { healthRoutes } from './routes/health'

export interface AppOptions {
  /** serve the built client from dist/ (default: when dist/index.html exists) */
  serveClient?: boolean
}

export const distFolder = fileURLToPath(new URL('../dist', import.meta.url))

export function createApp(context: AppContext, options: AppOptions = {}) {
  const app = express()
  app.locals.ctx = context
  app.disable('x-powered-by')
  if (context.config.trustProxy) app.set('trust proxy', 1)
  app.use(hostCheck(() => context.config.publicUrl))

  app.use(helmet({
    contentSecurityPolicy: {
      directives: {
        defaultSrc: ["'self'"],
        // the sheet compiler turns checked sheets into functions in the browser (quick simulation)
        scriptSrc: ["'self'", "'unsafe-eval'"],
        styleSrc: ["'self'", "'unsafe-inline'"],
        imgSrc: ["'self'", 'data:', 'blob:'],
        fontSrc: ["'self'", 'data:'],
        workerSrc: ["'self'", 'blob:'],
        connectSrc: ["'self'"],
        upgradeInsecureRequests: context.config.trustProxy ? [] : null,
      },
    },
    strictTransportSecurity: context.config.trustProxy,
  }))

  // gzip (or deflate) of every compressible reply above 1 kB: the client's scripts, styles and JSON;
  // server-sent events stream uncompressed so each event arrives at once
  app.use(compression({
    threshold: 1024,
    filter: (req, res) => !String(res.getHeader('Content-Type') ?? '').startsWith('text/event-stream') && compression.filter(req, res),
  }))

  // health answers without the session store (it must answer 503 with the reason while the database is away)
  app.use('/api/health', healthRoutes())
  app.use('/api', express.json({ limit: '2mb' }))
  app.use('/api', sessionMiddleware(context.database.pool, context.config))
  app.use('/api', csrfGuard([context.config.publicUrl]))
  app.use('/api', resolveAuth)
  app.use('/api', apiRouter(context))
  app.use('/api', notFoundHandler)

  const serveClient = options.serveClient ?? existsSync(path.join(distFolder, 'index.html'))
  if (serveClient) {
    app.use(express.static(distFolder, { index: false, maxAge: '1h' }))
    app.get('/{*splat}', (_req, res) => res.sendFile(path.join(distFolder, 'index.html')))
  }
  app.use(errorHandler)
  return app
}

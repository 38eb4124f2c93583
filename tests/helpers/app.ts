/** A Pewter app on a fresh, migrated and seeded database, plus supertest agents that sign in. */
import request from 'supertest'
import type { Express } from 'express'
import { createApp } from '../../server/app'
import { createContext } from '../../server/bootstrap'
import type { AppContext } from '../../server/context'
import type { Config } from '../../server/config'
import { DEMO_PASSWORD } from '../../server/db/seed'
import { freshDatabaseUrl } from './db'

export interface TestApp {
  app: Express
  context: AppContext
  close: () => Promise<void>
}

export async function makeTestApp(tag: string, overrides: Partial<Config> = {}, opts: { seed?: boolean } = {}): Promise<TestApp> {
  const databaseUrl = await freshDatabaseUrl(tag)
  const context = await createContext({ databaseUrl, rateLimitAuth: 10_000, ...overrides }, opts)
  const app = createApp(context, { serveClient: false })
  return { app, context, close: () => context.database.close() }
}

/** The header every state-changing request from our client carries (CSRF defence). */
export const CSRF = { 'X-Requested-With': 'pewter' }

export type Agent = ReturnType<typeof request.agent>

/** A cookie-keeping agent signed in as `email` (demo password by default). */
export async function signedIn(app: Express, email: string, password = DEMO_PASSWORD): Promise<Agent> {
  const agent = request.agent(app)
  const r = await agent.post('/api/auth/signin').set(CSRF).send({ email, password })
  if (r.status !== 200) throw new Error(`sign-in as ${email} failed: ${r.status} ${JSON.stringify(r.body)}`)
  return agent
}

export const demo = {
  admin: 'admin@tinmoor.example',
  modeler: 'modeler@tinmoor.example',
  modeler2: 'modeler2@tinmoor.example',
  reviewer: 'reviewer@tinmoor.example',
  viewer: 'viewer@tinmoor.example',
  ws: 'tinmoor',
}

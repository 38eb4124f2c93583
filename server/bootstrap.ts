/**
 * Opens the database, applies migrations, seeds the demo workspace and builds the app context.
 * Shared by server/index.ts and the tests.
 */
import { loadConfig, type Config } from './config'
import type { AppContext } from './context'
import { migrateDatabase, openDatabase } from './db/client'
import { seedDemo } from './db/seed'
import { attachServices } from './services/runtime'
import { loadTemplatesEverywhere } from './services/templates'
import { seedDemoProject } from './services/demo-project'
import { demoDecision } from './startup-policy'

export async function createContext(overrides: Partial<Config> = {}, opts: { seed?: boolean } = {}): Promise<AppContext> {
  const config = { ...loadConfig(), ...overrides }
  if (!config.databaseUrl) throw new Error('DATABASE_URL is not set (npm start and npm test start their own PostgreSQL and set it)')
  const database = openDatabase(config.databaseUrl)
  await migrateDatabase(database)
  const context: AppContext = { config, database, db: database.db, services: {} }
  // the demo workspace (published password) only where PEWTER_DEMO and the listening address allow it
  if (opts.seed !== false && demoDecision(config).seed) {
    await seedDemo(database.db)
    await loadTemplatesEverywhere(database.db, database.pool)
    // the demo project runs a fit on first start; test apps skip it unless asked (tests seed it themselves)
    if (process.env.NODE_ENV !== 'test' || process.env.PEWTER_DEMO_PROJECT === '1') await seedDemoProject(database.db)
  }
  await attachServices(context)
  return context
}

/** Starts the Pewter server: migrate, seed on first run, listen on 127.0.0.1:PORT. */
import { createApp } from './app'
import { createContext } from './bootstrap'
import { DEMO_PASSWORD, DEMO_USERS } from './db/seed'
import { survivePostgresRestarts } from './db/resilience'

export async function startServer() {
  survivePostgresRestarts((m) => console.error(`[pewter] ${m}`))
  const context = await createContext()
  const app = createApp(context)
  const host = process.env.HOST ?? '127.0.0.1'
  const server = app.listen(context.config.port, host)
  await new Promise<void>((resolve, reject) => { server.once('listening', resolve); server.once('error', reject) })
  console.log(`\nPewter is running at http://${host}:${context.config.port}\n`)
  console.log(`Demo sign-ins (password "${DEMO_PASSWORD}"):`)
  for (const u of DEMO_USERS) console.log(`  ${u.role.padEnd(9)} ${u.email}`)
  console.log('')
  const shutdown = async () => {
    server.close()
    await context.database.close()
  }
  return { server, context, shutdown }
}

if (import.meta.url === `file://${process.argv[1]}`) {
  startServer().catch((err) => { console.error(err); process.exit(1) })
}

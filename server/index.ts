/** Starts the Pewter server: migrate, seed the demo where allowed, listen on HOST:PORT (127.0.0.1 by default). */
import { createApp } from './app'
import { createContext } from './bootstrap'
import { loadConfig } from './config'
import { DEMO_PASSWORD, DEMO_USERS } from './db/seed'
import { demoDecision, startRefusal } from './startup-policy'
import { survivePostgresRestarts } from './db/resilience'

export async function startServer() {
  const refusal = startRefusal(loadConfig())
  if (refusal) throw new Error(refusal)
  survivePostgresRestarts((m) => console.error(`[pewter] ${m}`))
  const context = await createContext()
  const app = createApp(context)
  const { host, port } = context.config
  const server = app.listen(port, host)
  await new Promise<void>((resolve, reject) => { server.once('listening', resolve); server.once('error', reject) })
  console.log(`\nPewter is running at http://${host}:${port}\n`)
  const demo = demoDecision(context.config)
  if (demo.seed) {
    console.log(`Demo workspace: on (${demo.reason}). Sign-ins (password "${DEMO_PASSWORD}"):`)
    for (const u of DEMO_USERS) console.log(`  ${u.role.padEnd(9)} ${u.email}`)
  } else {
    console.log(`Demo workspace: off (${demo.reason}).`)
  }
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

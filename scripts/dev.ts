/**
 * `npm run dev`: the API as `npm start` runs it (private PostgreSQL, migrations, demo seed, fake
 * SMTP) without building the client, plus Vite's dev server with hot reload on :5173, which proxies
 * `/api` to that API (vite.config.ts reads API_PORT). Ctrl-C stops both.
 */
import { spawn } from 'node:child_process'
import { createServer } from 'vite'

const apiPort = process.env.PORT ?? '3000'

async function waitForApi(url: string, timeoutMs: number): Promise<void> {
  const until = Date.now() + timeoutMs
  while (Date.now() < until) {
    try {
      if ((await fetch(url)).ok) return
    } catch { /* not listening yet */ }
    await new Promise((r) => setTimeout(r, 300))
  }
  throw new Error(`the API did not answer at ${url} within ${timeoutMs / 1000} s`)
}

async function main() {
  const api = spawn(process.execPath, ['--import', 'tsx', 'scripts/start.ts'], {
    stdio: 'inherit',
    env: { ...process.env, PORT: apiPort, PEWTER_SKIP_BUILD: '1' },
  })
  api.on('exit', (code) => { console.error(`[pewter] the API stopped (exit ${code ?? 'signal'})`); process.exit(code ?? 1) })
  await waitForApi(`http://127.0.0.1:${apiPort}/api/health`, 120_000)
  process.env.API_PORT = apiPort
  const vite = await createServer({ server: { port: Number(process.env.VITE_PORT ?? 5173), strictPort: true } })
  await vite.listen()
  vite.printUrls()
  const bye = async () => {
    await vite.close().catch(() => {})
    api.kill('SIGTERM')
  }
  process.on('SIGINT', bye)
  process.on('SIGTERM', bye)
}

main().catch((err) => { console.error(`[pewter] ${err instanceof Error ? err.message : err}`); process.exit(1) })

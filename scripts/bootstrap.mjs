// Runs before `npm start` and `npm test` (npm's prestart/pretest), with Node built-ins only:
// installs the dependencies when node_modules is missing or older than package-lock.json.
import { existsSync, statSync } from 'node:fs'
import { spawnSync } from 'node:child_process'

const lock = 'package-lock.json'
const marker = 'node_modules/.package-lock.json'
const stale = !existsSync(marker) || (existsSync(lock) && statSync(lock).mtimeMs > statSync(marker).mtimeMs + 1000)
if (stale) {
  console.log('[pewter] installing dependencies (npm ci) …')
  const r = spawnSync('npm', ['ci', '--no-audit', '--no-fund'], { stdio: 'inherit' })
  if (r.status !== 0) process.exit(r.status ?? 1)
}

// the command line, bundled ahead of time so `npm run -s pewter -- …` starts at once
const { ensureCli } = await import('./cli-bundle.mjs')
await ensureCli()

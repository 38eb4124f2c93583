/**
 * `npm test`: type-checks, lints (ESLint, then the layer rules with dependency-cruiser), builds the
 * client (the browser tests use it), then runs the whole vitest
 * suite; the suite's global setup starts a throw-away PostgreSQL unless DATABASE_URL is set, and the
 * browser tests need Debian's Chromium (installed here with apt-get when missing).
 */
import { spawnSync } from 'node:child_process'
import { existsSync, mkdirSync, readFileSync, rmSync } from 'node:fs'

function step(title: string, cmd: string, args: string[]) {
  console.log(`\n[pewter test] ${title}`)
  const r = spawnSync(cmd, args, { stdio: 'inherit', env: process.env })
  if (r.status !== 0) {
    console.error(`[pewter test] ${title} failed (exit ${r.status})`)
    process.exit(r.status ?? 1)
  }
}

if (!existsSync('/usr/bin/chromium')) {
  const sudo = process.getuid && process.getuid() !== 0 ? ['sudo'] : []
  const env = { ...process.env, DEBIAN_FRONTEND: 'noninteractive' }
  console.log('[pewter test] installing Debian chromium for the browser tests …')
  for (const a of [['apt-get', 'update'], ['apt-get', 'install', '-y', 'chromium']]) {
    const full = [...sudo, ...a]
    const r = spawnSync(full[0], full.slice(1), { stdio: 'inherit', env })
    if (r.status !== 0) { console.error('[pewter test] could not install chromium'); process.exit(1) }
  }
}

step('type-check', 'npm', ['run', '-s', 'typecheck'])
step('lint', 'npm', ['run', '-s', 'lint'])
step('layer rules and import cycles', 'npm', ['run', '-s', 'lint:deps'])
step('build the client', 'npx', ['vite', 'build', '--logLevel', 'warn'])
mkdirSync('test-artifacts', { recursive: true })
const report = 'test-artifacts/vitest-report.json'
rmSync(report, { force: true })
console.log('\n[pewter test] vitest')
const r = spawnSync('npx', ['vitest', 'run', '--reporter=default', '--reporter=json', `--outputFile.json=${report}`, ...process.argv.slice(2)], { stdio: 'inherit', env: process.env })
if (existsSync(report)) {
  const j = JSON.parse(readFileSync(report, 'utf8')) as { numPassedTests: number; numFailedTests: number; numPendingTests: number; numTotalTests: number }
  // the plain closing line CI reads
  console.log(`\n${j.numPassedTests} passed, ${j.numFailedTests} failed`)
  if (j.numTotalTests === 0) { console.error('[pewter test] no test ran'); process.exit(1) }
}
process.exit(r.status ?? 1)

import { chromium } from 'playwright-core'
const [,, path, out] = process.argv
const b = await chromium.launch({ executablePath: '/usr/bin/chromium', args: ['--headless','--no-sandbox','--disable-gpu','--disable-background-networking','--disable-component-update','--disable-sync','--no-first-run'] })
const p = await b.newPage({ viewport: { width: 1400, height: 900 } })
await p.goto('http://127.0.0.1:3000/signin')
await p.getByLabel('E-mail').fill('modeler@tinmoor.example')
await p.getByLabel('Password').fill('pewter-demo')
await p.getByRole('button', { name: 'Sign in' }).click()
await p.waitForURL(/\/w\//)
await p.goto('http://127.0.0.1:3000' + path)
await p.waitForTimeout(4000)
await p.screenshot({ path: out, fullPage: true })
await b.close()

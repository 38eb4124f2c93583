/** Whether a start seeds the demo accounts (published password) and whether it may start at all. */
import { describe, expect, it } from 'vitest'
import { DEFAULT_SESSION_SECRET, loadConfig } from '../../server/config'
import { demoDecision, isLoopbackHost, startRefusal } from '../../server/startup-policy'
import { startServer } from '../../server/index'

const cfg = (env: Record<string, string>) => loadConfig({ ...env } as NodeJS.ProcessEnv)

describe('demo seeding', () => {
  it('seeds on loopback outside production by default', () => {
    expect(demoDecision(cfg({})).seed).toBe(true)
    expect(demoDecision(cfg({ HOST: 'localhost', NODE_ENV: 'development' })).seed).toBe(true)
    expect(demoDecision(cfg({ HOST: '::1' })).seed).toBe(true)
  })

  it('does not seed in production or when listening beyond loopback, and says why', () => {
    const prod = demoDecision(cfg({ NODE_ENV: 'production' }))
    expect(prod.seed).toBe(false)
    expect(prod.reason).toMatch(/NODE_ENV=production/)
    const lan = demoDecision(cfg({ HOST: '0.0.0.0' }))
    expect(lan.seed).toBe(false)
    expect(lan.reason).toMatch(/not on loopback/)
  })

  it('PEWTER_DEMO=1 forces it on, PEWTER_DEMO=0 off', () => {
    expect(demoDecision(cfg({ HOST: '0.0.0.0', NODE_ENV: 'production', PEWTER_DEMO: '1' }))).toEqual({ seed: true, reason: 'PEWTER_DEMO=1' })
    expect(demoDecision(cfg({ PEWTER_DEMO: '0' }))).toEqual({ seed: false, reason: 'PEWTER_DEMO=0' })
  })

  it('knows loopback names', () => {
    for (const h of ['127.0.0.1', '127.1.2.3', 'localhost', '::1', '[::1]']) expect(isLoopbackHost(h)).toBe(true)
    for (const h of ['0.0.0.0', '10.0.0.5', '::', 'pewter.tinmoor.example', '127.0.0.1.attacker.example']) expect(isLoopbackHost(h)).toBe(false)
  })
})

describe('session secret', () => {
  it('refuses the development secret beyond loopback, allows it on loopback or with a real secret', () => {
    expect(cfg({}).sessionSecret).toBe(DEFAULT_SESSION_SECRET)
    expect(startRefusal(cfg({}))).toBeNull()
    expect(startRefusal(cfg({ HOST: '0.0.0.0' }))).toMatch(/SESSION_SECRET/)
    expect(startRefusal(cfg({ HOST: '0.0.0.0', SESSION_SECRET: 'a-long-random-value-0123456789abcdef' }))).toBeNull()
  })

  it('the server does not start with it on a public address', async () => {
    const saved = { HOST: process.env.HOST, SESSION_SECRET: process.env.SESSION_SECRET }
    process.env.HOST = '0.0.0.0'
    delete process.env.SESSION_SECRET
    try {
      await expect(startServer()).rejects.toThrow(/Refusing to listen on 0\.0\.0\.0 with the development SESSION_SECRET/)
    } finally {
      for (const [k, v] of Object.entries(saved)) if (v === undefined) delete process.env[k]; else process.env[k] = v
    }
  })
})

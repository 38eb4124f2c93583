/**
 * What a start is allowed to do, decided from the configuration alone (so it is tested without
 * listening): whether the demo workspace with its published password is seeded, and whether the
 * server may start at all.
 */
import { DEFAULT_SESSION_SECRET, type Config } from './config'

/** 127.0.0.0/8, ::1 and localhost: reachable from this machine only. */
export function isLoopbackHost(host: string): boolean {
  const h = host.trim().toLowerCase().replace(/^\[|\]$/g, '')
  return h === 'localhost' || h === '::1' || h === '::ffff:127.0.0.1' || /^127(\.\d{1,3}){3}$/.test(h)
}

export interface DemoDecision { seed: boolean; reason: string }

/** PEWTER_DEMO=1 seeds, PEWTER_DEMO=0 does not; otherwise only on loopback outside production. */
export function demoDecision(config: Pick<Config, 'demo' | 'host' | 'production'>): DemoDecision {
  if (config.demo === 'on') return { seed: true, reason: 'PEWTER_DEMO=1' }
  if (config.demo === 'off') return { seed: false, reason: 'PEWTER_DEMO=0' }
  if (config.production) return { seed: false, reason: 'NODE_ENV=production (set PEWTER_DEMO=1 to seed it anyway)' }
  if (!isLoopbackHost(config.host)) return { seed: false, reason: `listening on ${config.host}, not on loopback (set PEWTER_DEMO=1 to seed it anyway)` }
  return { seed: true, reason: `listening on loopback (${config.host}) outside production; PEWTER_DEMO=0 turns it off` }
}

/** Why the server must not start with this configuration, or null. */
export function startRefusal(config: Pick<Config, 'host' | 'sessionSecret'>): string | null {
  if (!isLoopbackHost(config.host) && config.sessionSecret === DEFAULT_SESSION_SECRET) {
    return `Refusing to listen on ${config.host} with the development SESSION_SECRET: anyone who knows it can forge sessions. Set SESSION_SECRET to a long random value (e.g. \`openssl rand -hex 32\`).`
  }
  return null
}

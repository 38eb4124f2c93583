/** Whether the database answers a trivial query within a short time, and why not. */
import type pg from 'pg'

export const HEALTH_TIMEOUT_MS = 1500

export async function databaseHealth(pool: pg.Pool, timeoutMs = HEALTH_TIMEOUT_MS): Promise<{ ok: true } | { ok: false; reason: string }> {
  let timer: NodeJS.Timeout | undefined
  const timeout = new Promise<never>((_, reject) => { timer = setTimeout(() => reject(new Error(`no answer within ${timeoutMs} ms`)), timeoutMs) })
  try {
    await Promise.race([pool.query('select 1'), timeout])
    return { ok: true }
  } catch (e) {
    return { ok: false, reason: `the database is unreachable: ${e instanceof Error ? e.message : String(e)}` }
  } finally {
    clearTimeout(timer)
  }
}
